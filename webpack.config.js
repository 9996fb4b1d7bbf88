// Webpack 5 configuration of the embedded Stepwell app (JupyterLab 4.6 front end + JupyterLite
// in-browser services). Used through src/host/build.mjs, which first generates the plugin list
// module (build/gen/extensions.js) and afterwards writes the static assets (src/host/assets.mjs).
const fs = require('fs');
const path = require('path');
const webpack = require('webpack');

const ROOT = __dirname;
const BUILD = path.join(ROOT, 'build');

/** Version of an installed package, read from its folder (some packages do not export package.json). */
function installedVersion(name) {
  try {
    return JSON.parse(fs.readFileSync(path.join(ROOT, 'node_modules', name, 'package.json'), 'utf8')).version;
  } catch {
    return undefined; // not bundled here (for example the debugger): nothing to share
  }
}

/**
 * The share scope offered to prebuilt extensions, as a JupyterLab app offers it: every core
 * package of `@jupyterlab/core-meta` (a prebuilt extension is built with `import: false` for all
 * of them, so it finds them here or nowhere), the core singletons as singletons, and the
 * JupyterLite packages of the in-browser services.
 */
function sharedPackages() {
  const coreMeta = require('@jupyterlab/core-meta/core.package.json');
  const singletons = new Set([
    ...coreMeta.jupyterlab.singletonPackages,
    '@jupyterlite/services',
    '@jupyterlite/localforage',
    '@jupyterlite/apputils',
    '@jupyterlite/application'
  ]);
  const names = new Set([...Object.keys(coreMeta.dependencies), ...Object.keys(coreMeta.resolutions || {}), ...singletons]);
  const shared = {};
  for (const name of names) {
    const version = installedVersion(name);
    if (version === undefined) continue;
    shared[name] = singletons.has(name) ? { singleton: true, requiredVersion: `^${version}`, version } : { requiredVersion: `^${version}`, version };
  }
  return shared;
}

module.exports = (env = {}) => ({
  mode: 'development',
  context: ROOT,
  entry: { main: './src/host/index.ts' },
  devtool: process.env.STEPWELL_SOURCEMAP ? 'cheap-module-source-map' : false,
  output: {
    path: path.join(BUILD, 'static'),
    filename: '[name].js',
    chunkFilename: '[name].[contenthash:8].js',
    assetModuleFilename: 'assets/[name].[contenthash:8][ext]',
    // 'auto': each script finds its folder from its own URL. The page's entry sets the public path
    // from the page config anyway; a Web Worker cannot, and must load its chunks from where it was
    // loaded itself (which is below a sub-path on the static site).
    publicPath: 'auto',
    clean: true
  },
  cache: {
    type: 'filesystem',
    cacheDirectory: path.join(ROOT, '.cache', 'webpack'),
    buildDependencies: { config: [__filename] }
  },
  infrastructureLogging: { level: 'error' },
  performance: { hints: false },
  resolve: {
    extensions: ['.ts', '.tsx', '.js', '.mjs', '.json'],
    // Our sources name compiled files (`./engine.worker.js`, as lib/ has them); here they are .ts.
    extensionAlias: { '.js': ['.ts', '.js'] },
    alias: {
      'stepwell-host-extensions': path.join(BUILD, 'gen', 'extensions.js'),
      'stepwell-host-plugins': path.join(ROOT, 'src', 'host', 'plugins', 'index.ts')
    },
    fallback: {
      path: require.resolve('path-browserify'),
      process: require.resolve('process/browser'),
      buffer: false,
      crypto: false,
      url: false,
      util: false,
      fs: false
    }
  },
  module: {
    rules: [
      // `?raw` imports are the file's source text; `?text` imports are an emitted file's URL
      // (the JupyterLite service worker). Both must not go through the JS/CSS rules below.
      { resourceQuery: /raw/, type: 'asset/source' },
      { resourceQuery: /text/, type: 'asset/resource', generator: { filename: '[name][ext]' } },
      {
        test: /\.tsx?$/,
        resourceQuery: { not: [/raw|text/] },
        exclude: /node_modules/,
        loader: 'esbuild-loader',
        options: { loader: 'tsx', target: 'es2021', tsconfig: path.join(ROOT, 'tsconfig.json') }
      },
      { test: /\.m?js$/, resourceQuery: { not: [/raw|text/] }, resolve: { fullySpecified: false } },
      { test: /\.raw\.css$/, type: 'asset/source' },
      {
        test: /(?<!\.raw)\.css$/,
        resourceQuery: { not: [/raw|text/] },
        use: ['style-loader', { loader: 'css-loader', options: { esModule: true } }]
      },
      // SVG referenced from CSS becomes a data URI; SVG imported from JS is its source text.
      { test: /\.svg$/, issuer: /\.css$/, resourceQuery: { not: [/raw|text/] }, type: 'asset/inline' },
      { test: /\.svg$/, issuer: { not: /\.css$/ }, resourceQuery: { not: [/raw|text/] }, type: 'asset/source' },
      { test: /\.(woff2?|ttf|eot|otf)$/, type: 'asset/resource' },
      { test: /\.(png|jpe?g|gif|ico)$/, type: 'asset/resource' },
      { test: /\.md$/, type: 'asset/source' }
    ]
  },
  plugins: [
    new webpack.ProvidePlugin({ process: 'process/browser' }),
    new webpack.container.ModuleFederationPlugin({
      name: 'stepwell_host',
      shared: sharedPackages()
    })
  ],
  stats: 'errors-warnings'
});
