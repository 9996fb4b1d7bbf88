// `npm run start:lab`: Stepwell in a real JupyterLab (or, with --notebook, Notebook 7) with a
// Python kernel. Creates .venv if needed, builds the prebuilt extension when stale, installs
// Stepwell in development mode, copies the demo notebooks into the work folder
// .jupyter-local/work/ (never overwriting one that is there), starts the server on 127.0.0.1
// and prints the URL of the first demo notebook. Ctrl+C stops the server and its kernels.
// Options: --notebook, --port N (or STEPWELL_LAB_PORT; default: a free port).
import path from 'node:path';
import { ROOT } from '../host/paths.mjs';
import { buildLabextension } from './labextension.mjs';
import { copyDemos, installDevelop, JUPYTER_LOCAL, startJupyter } from './lab-server.mjs';
import { ensureVenv } from './venv.mjs';

/** The folder the server shows: real files the user's notebooks are saved to. */
export const WORK_DIR = path.join(JUPYTER_LOCAL, 'work');

function portOption(argv, env) {
  const i = argv.findIndex(a => a === '--port' || a.startsWith('--port='));
  const raw = i >= 0 ? (argv[i].includes('=') ? argv[i].split('=')[1] : argv[i + 1]) : env.STEPWELL_LAB_PORT;
  if (raw === undefined || raw === '') return undefined;
  const port = Number(raw);
  if (!Number.isInteger(port) || port < 1 || port > 65535) {
    throw new Error(`port must be an integer from 1 to 65535 (from ${i >= 0 ? '--port' : 'STEPWELL_LAB_PORT'}), got "${raw}"`);
  }
  return port;
}

async function main(argv = process.argv.slice(2), env = process.env) {
  const app = argv.includes('--notebook') ? 'notebook' : 'lab';
  const port = portOption(argv, env);
  ensureVenv();
  buildLabextension({ development: true, ifStale: true });
  console.log('stepwell: installing Stepwell into .venv in development mode…');
  installDevelop();
  const { copied, kept } = copyDemos(WORK_DIR);
  const where = path.relative(ROOT, WORK_DIR);
  if (copied.length) console.log(`stepwell: copied ${copied.join(', ')} into ${where}/`);
  if (kept.length) console.log(`stepwell: kept ${kept.join(', ')} as found in ${where}/ (delete a file to get the shipped demo again)`);
  const first = [...copied, ...kept].sort()[0];
  console.log(`stepwell: starting ${app === 'lab' ? 'JupyterLab' : 'Notebook 7'} (server log: ${path.relative(ROOT, path.join(JUPYTER_LOCAL, 'server.log'))})…`);
  const server = await startJupyter({ app, root: WORK_DIR, port, logFile: path.join(JUPYTER_LOCAL, 'server.log') });
  console.log(`Stepwell is running in ${app === 'lab' ? 'JupyterLab' : 'Notebook 7'} at ${server.url(first)}`);
  const stop = () => {
    console.log('stepwell: stopping the server…');
    void server.stop().then(() => process.exit(0));
  };
  process.on('SIGINT', stop);
  process.on('SIGTERM', stop);
}

main().catch(err => {
  console.error(`stepwell: ${err.message}`);
  process.exit(1);
});
