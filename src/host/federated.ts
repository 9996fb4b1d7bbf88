/**
 * Loads prebuilt (federated) JupyterLab extensions listed in the page config's
 * `federated_extensions`: injects each remote entry script, joins it to the shared scope of the
 * app (so it uses the app's JupyterLab singletons), and returns its exposed modules.
 */
import { PageConfig, URLExt } from '@jupyterlab/coreutils';

declare const __webpack_init_sharing__: (scope: string) => Promise<void>;
declare const __webpack_share_scopes__: { default: unknown };

/** One entry of `federated_extensions`. */
export interface IFederatedExtension {
  name: string;
  load: string;
  extension?: string;
  mimeExtension?: string;
  style?: string;
}

/** A remote container as webpack module federation exposes it. */
interface IContainer {
  init(scope: unknown): Promise<void> | void;
  get(module: string): Promise<() => unknown>;
}

/** What one federated extension provided. */
export interface IFederatedModules {
  name: string;
  extension?: unknown;
  mimeExtension?: unknown;
}

/** The entries of the page config (an empty list when the key is missing). */
export function federatedEntries(): IFederatedExtension[] {
  const raw = PageConfig.getOption('federated_extensions');
  if (!raw) return [];
  const parsed: unknown = JSON.parse(raw);
  return Array.isArray(parsed) ? (parsed as IFederatedExtension[]) : [];
}

function loadScript(url: string): Promise<void> {
  return new Promise((resolve, reject) => {
    const script = document.createElement('script');
    script.src = url;
    script.async = true;
    script.onload = () => resolve();
    script.onerror = () => reject(new Error(`cannot load the remote entry ${url}`));
    document.head.appendChild(script);
  });
}

async function loadOne(data: IFederatedExtension): Promise<IFederatedModules> {
  await loadScript(URLExt.join(PageConfig.getOption('fullLabextensionsUrl'), data.name, data.load));
  await __webpack_init_sharing__('default');
  const registry = (window as unknown as { _JUPYTERLAB?: Record<string, IContainer> })._JUPYTERLAB;
  const container = registry?.[data.name];
  if (!container) {
    throw new Error(`the remote entry of ${data.name} did not register window._JUPYTERLAB["${data.name}"]`);
  }
  await container.init(__webpack_share_scopes__.default);
  const get = async (module?: string) => (module ? (await container.get(module))() : undefined);
  const [extension, mimeExtension] = await Promise.all([get(data.extension), get(data.mimeExtension), get(data.style)]);
  return { name: data.name, extension, mimeExtension };
}

/** Load every federated extension; one that fails is reported and left out. */
export async function loadFederated(entries: IFederatedExtension[]): Promise<IFederatedModules[]> {
  const results = await Promise.allSettled(entries.map(loadOne));
  const out: IFederatedModules[] = [];
  results.forEach((r, i) => {
    if (r.status === 'fulfilled') out.push(r.value);
    else console.error(`Stepwell host: prebuilt extension ${entries[i].name} failed to load`, r.reason);
  });
  return out;
}
