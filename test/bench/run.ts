/**
 * `npm run bench`: Stepwell against PyTorch / NumPy / SciPy measured side by side in this run
 * (`compare.ts`), the SIMD kernels against the measured WebAssembly SIMD peak (`kernels.ts`),
 * then every `test/bench/*.bench.ts` (Stepwell alone). Writes `test/bench/results.json` (every
 * figure, the machine, the load) and `test/bench/RESULTS.md` (tables of ratios), and prints as
 * it goes. `npm run bench -- compare` (or `kernels`, or a bench file's name) runs only that part.
 * How to read and rerun: test/bench/BENCHMARKS.md.
 */
import { readdirSync, writeFileSync } from 'node:fs';
import { cpus, loadavg, release } from 'node:os';
import { join } from 'node:path';
import type { BenchModule, BenchResult } from './types';
import { compare, type ComparedRow } from './compare';
import { kernelRates, type KernelReport } from './kernels';
import { browserFigures } from './browser';

const fmt = (ms: number): string => (ms >= 100 ? ms.toFixed(0) : ms >= 1 ? ms.toFixed(2) : ms.toPrecision(3));

function comparisonTable(rows: ComparedRow[]): string {
  const subjects = [...new Set(rows.map((r) => r.subject))];
  const lines = rows.map((r) => {
    const s = r.check.stepwell;
    const t = r.check.reference;
    const products = s.products !== undefined ? ` (Hv ${s.products} / ${t.products})` : '';
    return `| ${r.work} | ${r.subject} | ${fmt(r.stepwell.wallMs)} | ${fmt(r.reference.wallMs)} | **${r.ratio.toFixed(2)}** | ${r.cpuRatio.toFixed(2)} | ${r.stepwell.reps} / ${r.reference.reps} | ${r.load.toFixed(1)}${products} |`;
  });
  return `${subjects.length} subjects, ${rows.length} rows.\n\n| work | subject | Stepwell ms | reference ms | ratio (wall) | ratio (CPU) | reps | load${'\u00a0'}(Hv) |\n| --- | --- | --- | --- | --- | --- | --- | --- |\n${lines.join('\n')}\n`;
}

function kernelTable(k: KernelReport): string {
  const lines = k.rows.map((r) => `| ${r.kernel} | ${r.shape} | ${r.gflops.toFixed(1)} | ${(100 * r.ofPeak).toFixed(0)} % |`);
  return `Measured peak: **${k.peakGflops.toFixed(1)} GFLOP/s** (${k.peakWhat}); load ${k.load.toFixed(1)}.\n\n| kernel | shape | GFLOP/s | of peak |\n| --- | --- | --- | --- |\n${lines.join('\n')}\n`;
}

async function main(): Promise<void> {
  const only = process.argv.slice(2);
  const wants = (name: string): boolean => only.length === 0 || only.some((o) => name.includes(o));
  const machine = {
    date: new Date().toISOString(),
    node: process.version,
    v8: process.versions.v8,
    os: release(),
    cpus: cpus().length,
    cpu: cpus()[0]?.model ?? 'cpu',
    loadAtStart: loadavg(),
  };
  process.stdout.write(`machine: ${JSON.stringify(machine)}\n`);
  const json: Record<string, unknown> = { machine };
  const sections: string[] = [];
  if (wants('compare')) {
    process.stdout.write('== Stepwell against PyTorch / NumPy / SciPy, interleaved\n');
    const rowsWanted = process.env.STEPWELL_BENCH_ROWS;
    const { rows, versions } = await compare(rowsWanted ? { only: new RegExp(rowsWanted, 'i') } : {});
    json.reference = versions;
    json.comparison = rows;
    sections.push(`## Stepwell against the reference, measured side by side\n\nReference: ${versions.interpreter} — Python ${versions.python}, torch ${versions.torch}, NumPy ${versions.numpy}, SciPy ${versions.scipy ?? 'not installed'}; one thread each. Ratio = Stepwell's median ÷ the reference's median (below 1: Stepwell is faster); rows interleave the two sides round by round.\n\n${comparisonTable(rows)}`);
  }
  if (wants('kernels')) {
    process.stdout.write('== SIMD kernels against the measured WebAssembly SIMD peak\n');
    const k = kernelRates();
    json.kernels = k;
    sections.push(`## SIMD kernels against the measured peak\n\n${kernelTable(k)}`);
    k.rows.forEach((r) => process.stdout.write(`${r.kernel} ${r.shape}: ${r.gflops.toFixed(1)} GFLOP/s (${(100 * r.ofPeak).toFixed(0)} % of ${k.peakGflops.toFixed(1)})\n`));
  }
  if (wants('browser')) {
    process.stdout.write('== In the browser: the embedded app in headless Chromium\n');
    const b = await browserFigures();
    json.browser = b;
    const lines = b.rows.map((r) => `| ${r.what} | ${r.subject} | ${fmt(r.ms)} | ${r.reps} |`);
    sections.push(`## In the browser (embedded app, headless Chromium ${b.chromium})\n\nMilliseconds from the click to the cell showing the result, measured in the page; load ${b.load[0].toFixed(1)} at the end.\n\n| what | subject | ms (median) | reps |\n| --- | --- | --- | --- |\n${lines.join('\n')}\n`);
  }
  const files = readdirSync(__dirname).filter((f) => f.endsWith('.bench.ts') && wants(f)).sort();
  const alone: Record<string, BenchResult[]> = {};
  for (const f of files) {
    const mod = (await import(join(__dirname, f))) as BenchModule;
    process.stdout.write(`== ${mod.title}\n`);
    const results: BenchResult[] = await mod.run();
    alone[f] = results;
    const rows = results.map((r) => {
      const extra = r.extra ? Object.entries(r.extra).map(([k, v]) => `${k} ${v}`).join(', ') : '';
      process.stdout.write(`${r.name}: ${r.ms.toPrecision(4)} ms ${extra}\n`);
      return `| ${r.name} | ${r.ms.toPrecision(4)} | ${r.reps} | ${extra} |`;
    });
    sections.push(`## ${mod.title}\n\n| what | ms (median) | reps | notes |\n| --- | --- | --- | --- |\n${rows.join('\n')}\n`);
  }
  json.alone = alone;
  json.loadAtEnd = loadavg();
  const header = `# Benchmark results\n\nWritten by \`npm run bench\` on ${machine.date.slice(0, 10)}: Node ${machine.node} (V8 ${machine.v8}), ${machine.cpus} × ${machine.cpu}, load average ${machine.loadAtStart[0].toFixed(2)} at the start and ${loadavg()[0].toFixed(2)} at the end. Float64, one thread. Every figure is measured in this run (test/bench/BENCHMARKS.md says how); all of them are in results.json.\n\n`;
  if (only.length === 0 && !process.env.STEPWELL_BENCH_ROWS) {
    writeFileSync(join(__dirname, 'RESULTS.md'), header + sections.join('\n'));
    writeFileSync(join(__dirname, 'results.json'), `${JSON.stringify(json, null, 1)}\n`);
  }
}

main().catch((e) => {
  process.stderr.write(`${(e as Error).stack ?? String(e)}\n`);
  process.exitCode = 1;
});
