// `npm start`: install the dependencies when node_modules is missing or stale, rebuild the app if
// its inputs changed, regenerate the contents index from demo-notebooks/, serve, and print the
// notebook URL.
import { ensureDependencies } from './ensure-deps.mjs';

async function main() {
  ensureDependencies();
  const { build } = await import('./build.mjs');
  await build({ ifStale: true });
  const { serveFromCommandLine } = await import('./serve.mjs');
  await serveFromCommandLine();
}

main().catch(err => {
  console.error(`stepwell: ${err.message}`);
  process.exit(1);
});
