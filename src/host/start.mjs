// `npm start`: check that dependencies are installed, rebuild the app if its inputs changed,
// regenerate the contents index from demo-notebooks/, serve, and print the notebook URL.
import fs from 'node:fs';
import path from 'node:path';
import { ROOT } from './paths.mjs';

async function main() {
  const needed = ['webpack', '@jupyterlab/application', '@jupyterlite/services'];
  const missing = needed.filter(n => !fs.existsSync(path.join(ROOT, 'node_modules', n, 'package.json')));
  if (missing.length) {
    throw new Error(`dependencies are not installed (missing ${missing.join(', ')}): run \`npm ci\` in ${ROOT}`);
  }
  const { build } = await import('./build.mjs');
  await build({ ifStale: true });
  const { serveFromCommandLine } = await import('./serve.mjs');
  await serveFromCommandLine();
}

main().catch(err => {
  console.error(`stepwell: ${err.message}`);
  process.exit(1);
});
