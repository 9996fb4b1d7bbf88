/**
 * `npm run bench`: imports every `test/bench/*.bench.ts`, runs it and writes the figures to
 * `test/bench/RESULTS.md` (committed, so regressions show in review) and prints them.
 * Run on an idle machine; the machine's load is recorded beside the numbers.
 */
import { readdirSync, writeFileSync } from 'node:fs';
import { cpus, loadavg } from 'node:os';
import { join } from 'node:path';
import type { BenchModule, BenchResult } from './types';

async function main(): Promise<void> {
  const only = process.argv.slice(2);
  const files = readdirSync(__dirname).filter((f) => f.endsWith('.bench.ts') && (only.length === 0 || only.some((o) => f.includes(o)))).sort();
  const sections: string[] = [];
  for (const f of files) {
    const mod = (await import(join(__dirname, f))) as BenchModule;
    process.stdout.write(`== ${mod.title}\n`);
    const results: BenchResult[] = await mod.run();
    const rows = results.map((r) => {
      const ref = r.reference ? `${r.reference.ms} ms (${r.reference.what})` : '';
      const ratio = r.reference ? (r.ms / r.reference.ms).toFixed(2) : '';
      const extra = r.extra ? Object.entries(r.extra).map(([k, v]) => `${k} ${v}`).join(', ') : '';
      process.stdout.write(`${r.name}: ${r.ms.toPrecision(4)} ms ${ref ? `vs ${ref}, ratio ${ratio}` : ''} ${extra}\n`);
      return `| ${r.name} | ${r.ms.toPrecision(4)} | ${r.reps} | ${ref} | ${ratio} | ${extra} |`;
    });
    sections.push(`## ${mod.title}\n\n| what | ms (median) | reps | reference | ratio | notes |\n| --- | --- | --- | --- | --- | --- |\n${rows.join('\n')}\n`);
  }
  const header = `# Benchmark results\n\nWritten by \`npm run bench\` on ${new Date().toISOString().slice(0, 10)}: Node ${process.version}, ${cpus().length} × ${cpus()[0]?.model ?? 'cpu'}, load average at start ${loadavg()[0].toFixed(2)}. Times are medians of repeated runs in one process, float64, one thread.\n\n`;
  if (only.length === 0) writeFileSync(join(__dirname, 'RESULTS.md'), header + sections.join('\n'));
}

main().catch((e) => {
  process.stderr.write(`${(e as Error).stack ?? String(e)}\n`);
  process.exitCode = 1;
});
