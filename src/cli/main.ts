/**
 * `stepwell` command line over core + spec + ledger: `inspect` (loss, gradient, Hessian products,
 * eigenvalues, gradient audit at the initial point), `run` (a trajectory from spec + seed),
 * `diagnose` (findings with proposals), `probe` (line, plane, range test, precision), `export` (PyTorch script, weights, trajectories), and on
 * notebooks `verify` (replay every cell's ledger) and `report` (a standalone report).
 * Every command prints JSON with `--json` and a readable summary otherwise.
 */
import { parseArgs } from 'node:util';
import { CliError, type CommandResult, type Sink } from './io';
import { inspectCommand } from './inspect';
import { runCommand } from './run';
import { exportCommand } from './export';
import { diagnoseCommand } from './diagnose';
import { verifyCommand, EXIT_DIFFERS, EXIT_WITHIN } from './verify';
import { reportCommand } from './report';
import { probeCommand } from './probe';

const USAGE = `usage:
  stepwell inspect SPEC [--json] [--vector FILE] [--top K] [--bottom K] [--trace] [--density]
    --top/--bottom: extreme Hessian eigenvalues, dense up to 2000 parameters, Lanczos (with error bounds) beyond
    --trace: tr(H), exact when dense, Hutchinson with its standard error otherwise; --density: SLQ spectral density
  stepwell run SPEC --steps N [--json] [--until COND] [--set KEY=VALUE ...] [--branch STEP:KEY=VALUE[,...]] [--replay]
    COND: loss<VALUE | grad<VALUE | diverged
    --branch forks a branch at STEP with changed keys (as --set takes them) and runs it to the same step count
    --replay re-runs the trajectory from the seed and reports bit-identical / within tolerance / differs
    KEY: a recipe key (lr, momentum, ...), layers[i].lrScale, or a path from the top (model.init, model.gain,
    data.standardize, ...); setup keys change what is optimized, so their branch must fork at step 0
    every run stops at the first non-finite loss or weight; its final state is then the last finite one
  stepwell export SPEC [--to pytorch] [--out train.py] [--set KEY=VALUE ...] [--branch 0:KEY=VALUE[,...]]
    a self-contained PyTorch script (float64) of the recipe; \`python train.py --steps N --json\` prints
    the full-batch losses \`stepwell run SPEC --steps N --json\` reports; data paths are relative to
    the folder of --out (default: the current folder)
  stepwell export SPEC --to weights --steps N --out FILE.safetensors|FILE.npy   final weights after N updates
  stepwell export SPEC --to trajectory --steps N --out FILE.csv|FILE.npy|FILE.safetensors   (--csv: CSV, printed without --out)
  stepwell export NOTEBOOK.ipynb [--cell N] [--branch NAME] [--to pytorch|weights|trajectory | --csv] [--steps N] [--out FILE]
    what the cell's ledger recorded for the branch (default: the one shown when saved): its recipe as a script (branches
    forked at step 0), the weights of its tip (or of step N, rebuilt from the nearest stored checkpoint), its stored
    records; --cell may be left out when one cell has a ledger
  stepwell diagnose SPEC [--json] [--steps N] [--set KEY=VALUE ...]
    steps the recipe N times (default 100), measures the sharpness against the stability limit along the way and
    the curvature, gradient audit and noise scale at the end, and prints the findings; each proposal is printed so
    that stepwell run SPEC --steps N --branch STEP:KEY=VALUE,... tries it; a recipe that diverges is a finding, not an error
  stepwell probe SPEC --what line|plane|range|precision|batch [--steps N] [--json] [--set KEY=VALUE ...] [--points N] [--from X] [--to Y]
        [--directions random|eigenvectors] [--bits 16,10,8,6,4] [--batches 4,16,full] [--examples N]
    steps the recipe N times (default 0), then takes one readout at that state without moving it:
    line       the loss along the next update (t = 1 is the step taken) and along the top Hessian eigenvector, each with
               its quadratic model and Brent's minimum; --points grid points (41), --from/--to the range in steps (-0.5 … 2.5)
    plane      the loss over a --points × --points grid (21) of two filter-normalized random directions (Li et al. 2018) or
               the top two eigenvectors, with the trajectory so far projected onto the plane
    range      learning-rate range test (Smith 2017) on a throwaway fork: --points updates (40) with lr growing
               geometrically from --from (1e-5) to --to (10); the suggested range and the recipe's stability limit beside it
    precision  loss (and accuracy for classification) with the weights rounded to --bits significant bits
    batch      the recipe continued with each of --batches until each has drawn --examples examples (default 10 passes
               over the data), compared at equal examples seen, beside the gradient noise scale B = tr(Σ)/|G|²
  stepwell verify NOTEBOOK.ipynb [--json] [--cell N] [--max-updates N]
    replays every stepwell cell of the notebook, every branch, from spec and seed to every stored checkpoint and its
    tip, and says per branch: bit-identical, within tolerance (which quantity, how far) or differs from step k (which
    quantity, which record); also whether the spec text, the data files (read relative to the notebook) or the engine
    changed since the ledger was written. --cell N: only cell N (counting from 0)
  stepwell report NOTEBOOK.ipynb --out FILE.html|FILE.md [--cell N] [--max-updates N]
    a standalone report per stepwell cell: verification, figures (SVG), branches and their changes, findings with
    sources, recipes, spec, fingerprints; .html is one file that needs no server or network, .md writes its figures
    into FILE_files/ beside it; exits 0 once written (use verify as the gate)
  inspect, run, diagnose, probe and export take --limit NAME=VALUE (repeatable) to raise a size limit checked before anything is allocated:
    maxSpecChars, maxParameters, maxRows, maxColumns, maxActivations, maxFileBytes (defaults in DEVELOPERS.md)
  exit status: 0 done (verify: all bit-identical, nothing changed), 2 bad input, 3 run: the loss or the weights became
    non-finite (unless --until diverged), ${EXIT_DIFFERS} verify: a replay differs, the spec or data changed, a ledger was edited or
    cannot be read, ${EXIT_WITHIN} verify: not bit-identical, but every difference within the tolerance
  JSON holds NaN and ±Infinity as the strings "NaN", "Infinity" and "-Infinity"
`;

/** Runs the CLI with `argv` (without node and script); resolves to the exit code. */
export async function main(argv: string[], out: Sink, err: Sink): Promise<number> {
  const [command, ...rest] = argv;
  try {
    switch (command) {
      case 'inspect': {
        const a = parseArgs({ args: rest, allowPositionals: true, options: {
          json: { type: 'boolean' }, vector: { type: 'string' }, top: { type: 'string' }, bottom: { type: 'string' },
          trace: { type: 'boolean' }, density: { type: 'boolean' }, set: { type: 'string', multiple: true }, limit: { type: 'string', multiple: true },
        } });
        return report(inspectCommand(specPath(a.positionals), a.values), out, err);
      }
      case 'run': {
        const a = parseArgs({ args: rest, allowPositionals: true, options: {
          json: { type: 'boolean' }, steps: { type: 'string' }, until: { type: 'string' }, set: { type: 'string', multiple: true }, limit: { type: 'string', multiple: true },
          branch: { type: 'string' }, replay: { type: 'boolean' },
        } });
        return report(runCommand(specPath(a.positionals), a.values), out, err);
      }
      case 'export': {
        const a = parseArgs({ args: rest, allowPositionals: true, options: {
          to: { type: 'string' }, out: { type: 'string' }, steps: { type: 'string' }, set: { type: 'string', multiple: true }, limit: { type: 'string', multiple: true }, branch: { type: 'string' },
          cell: { type: 'string' }, csv: { type: 'boolean' },
        } });
        return report(exportCommand(specPath(a.positionals), a.values), out, err);
      }
      case 'verify': {
        const a = parseArgs({ args: rest, allowPositionals: true, options: {
          json: { type: 'boolean' }, cell: { type: 'string' }, 'max-updates': { type: 'string' },
        } });
        return report(verifyCommand(notebookPath(a.positionals), a.values), out, err);
      }
      case 'report': {
        const a = parseArgs({ args: rest, allowPositionals: true, options: {
          out: { type: 'string' }, cell: { type: 'string' }, 'max-updates': { type: 'string' },
        } });
        return report(reportCommand(notebookPath(a.positionals), a.values), out, err);
      }
      case 'probe': {
        const a = parseArgs({ args: rest, allowPositionals: true, options: {
          what: { type: 'string' }, json: { type: 'boolean' }, steps: { type: 'string' }, points: { type: 'string' }, from: { type: 'string' }, to: { type: 'string' },
          directions: { type: 'string' }, bits: { type: 'string' }, batches: { type: 'string' }, examples: { type: 'string' }, set: { type: 'string', multiple: true }, limit: { type: 'string', multiple: true },
        } });
        return report(probeCommand(specPath(a.positionals), a.values), out, err);
      }
      case 'diagnose': {
        const a = parseArgs({ args: rest, allowPositionals: true, options: {
          json: { type: 'boolean' }, steps: { type: 'string' }, set: { type: 'string', multiple: true }, limit: { type: 'string', multiple: true },
        } });
        return report(diagnoseCommand(specPath(a.positionals), a.values), out, err);
      }
      case undefined:
      case '--help':
      case 'help':
        out.write(USAGE);
        return command === undefined ? 2 : 0;
      default:
        throw new CliError(`unknown command '${command}'\n${USAGE}`);
    }
  } catch (e) {
    if (e instanceof CliError) {
      const lines = e.message.split('\n').filter((l) => l.trim() !== '');
      err.write(lines.map((l) => (l.startsWith('usage') || l.startsWith(' ') ? l : `stepwell: ${l}`)).join('\n') + '\n');
      return e.exitCode;
    }
    // Duck-typed: node:util's parse errors may come from another realm (jest's vm), where instanceof fails.
    const parse = e as { code?: unknown; message?: unknown } | null;
    if (typeof parse === 'object' && parse !== null && String(parse.code).startsWith('ERR_PARSE_ARGS')) {
      err.write(`stepwell: ${String(parse.message).split('\n')[0]}\n${USAGE}`);
      return 2;
    }
    throw e;
  }
}

/** Writes a command's output and warnings; returns its exit code. */
function report(r: CommandResult, out: Sink, err: Sink): number {
  for (const w of r.warnings) err.write(`stepwell: ${w}\n`);
  out.write(r.out);
  return r.code;
}

function notebookPath(positionals: string[]): string {
  if (positionals.length !== 1) throw new CliError(`expected exactly one NOTEBOOK file, got ${positionals.length}\n${USAGE}`);
  return positionals[0];
}

function specPath(positionals: string[]): string {
  if (positionals.length !== 1) throw new CliError(`expected exactly one SPEC file, got ${positionals.length}\n${USAGE}`);
  return positionals[0];
}
