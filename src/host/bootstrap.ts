/**
 * Starts the JupyterLab front end with the plugin packages listed in src/host/app.json, the
 * JupyterLite in-browser services, the host plugins and (when present) the Stepwell plugins.
 */
import { PageConfig } from '@jupyterlab/coreutils';
import { PluginRegistry, type IPlugin } from '@lumino/coreutils';
import { extensions, mimeExtensions, type IExtensionModule } from 'stepwell-host-extensions';
import { federatedEntries, loadFederated } from './federated';

type AnyPlugin = IPlugin<unknown, unknown> & { id: string };

/** Plugins exported by a module: its default export (one plugin or an array), or the module itself. */
function pluginsOf(mod: unknown): AnyPlugin[] {
  const m = mod as { __esModule?: boolean; default?: unknown };
  const exported = m && 'default' in m && m.default !== undefined ? m.default : mod;
  return (Array.isArray(exported) ? exported : [exported]) as AnyPlugin[];
}

/** Name of the cell-executor token, which the Stepwell plugin provides in place of JupyterLab's default. */
const CELL_EXECUTOR_TOKEN = '@jupyterlab/notebook:INotebookCellExecutor';
/** JupyterLab's default provider of that token (disabled in the page config). */
const DEFAULT_CELL_EXECUTOR = '@jupyterlab/notebook-extension:cell-executor';

function providesToken(plugin: AnyPlugin, tokenName: string): boolean {
  return !!plugin.provides && plugin.provides.name === tokenName;
}

/** Load every module; a package that fails to load is reported and left out, the rest still start. */
async function collect(
  mods: IExtensionModule[],
  disabled: string[],
  deferred: string[],
  setAside: AnyPlugin[] = []
): Promise<AnyPlugin[]> {
  const out: AnyPlugin[] = [];
  const loaded = await Promise.allSettled(mods.map(m => m.load()));
  loaded.forEach((result, i) => {
    if (result.status === 'rejected') {
      console.error(`Stepwell host: plugin package ${mods[i].name} failed to load`, result.reason);
      return;
    }
    for (const plugin of pluginsOf(result.value)) {
      if (PageConfig.Extension.isDisabled(plugin.id)) {
        disabled.push(plugin.id);
        setAside.push(plugin);
        continue;
      }
      if (PageConfig.Extension.isDeferred(plugin.id)) {
        deferred.push(plugin.id);
      }
      out.push(plugin);
    }
  });
  return out;
}

/** Build and start the application. Resolves once the shell has restored its layout. */
export async function main(): Promise<void> {
  const disabled: string[] = [];
  const deferred: string[] = [];
  const [{ JupyterLab }, { IServiceManager, IConnectionStatus }] = await Promise.all([
    import('@jupyterlab/application'),
    import('@jupyterlab/services')
  ]);
  // A prebuilt extension replaces the bundled package of the same name.
  const federated = await loadFederated(federatedEntries());
  const replaced = new Set(federated.map(f => f.name));
  const bundled = (mods: IExtensionModule[]) => mods.filter(m => !replaced.has(m.name));
  const fromFederated = (key: 'extension' | 'mimeExtension'): IExtensionModule[] =>
    federated
      .filter(f => f[key] !== undefined)
      .map(f => ({ name: f.name, load: () => Promise.resolve(f[key]) }));
  const mime = await collect([...bundled(mimeExtensions), ...fromFederated('mimeExtension')], disabled, deferred);
  const setAside: AnyPlugin[] = [];
  const plugins = await collect([...bundled(extensions), ...fromFederated('extension')], disabled, deferred, setAside);
  // Without the Stepwell plugin (or if it failed to load) nothing provides the cell executor and
  // every notebook plugin would fail: fall back to JupyterLab's default executor.
  if (!plugins.some(p => providesToken(p, CELL_EXECUTOR_TOKEN))) {
    const fallback = setAside.find(p => p.id === DEFAULT_CELL_EXECUTOR);
    if (fallback) {
      console.warn(`Stepwell host: no plugin provides ${CELL_EXECUTOR_TOKEN}; using ${DEFAULT_CELL_EXECUTOR}`);
      plugins.push(fallback);
      disabled.splice(disabled.indexOf(DEFAULT_CELL_EXECUTOR), 1);
    }
  }

  performance.mark('stepwell-host:plugins-loaded');
  const pluginRegistry = new PluginRegistry();
  pluginRegistry.registerPlugins(plugins);
  // Resolve the service manager from the in-browser service plugins before the app exists.
  const serviceManager = await pluginRegistry.resolveOptionalService(IServiceManager);
  const connectionStatus = await pluginRegistry.resolveOptionalService(IConnectionStatus);

  const lab = new JupyterLab({
    pluginRegistry,
    serviceManager: serviceManager ?? undefined,
    connectionStatus: connectionStatus ?? undefined,
    mimeExtensions: mime as never,
    disabled: { matches: disabled, patterns: [...PageConfig.Extension.disabled] },
    deferred: { matches: deferred, patterns: [...PageConfig.Extension.deferred] }
  });
  if ((PageConfig.getOption('exposeAppInBrowser') || '').toLowerCase() === 'true') {
    (window as unknown as { jupyterapp: unknown }).jupyterapp = lab;
  }
  performance.mark('stepwell-host:services-resolved');
  await lab.start({ ignorePlugins: deferred, bubblingKeydown: true });
  performance.mark('stepwell-host:started');
  await lab.restored;
  performance.mark('stepwell-host:restored');
  document.body.dataset.stepwellHost = 'restored';
}
