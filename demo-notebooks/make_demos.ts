/**
 * Writes the demo notebooks from our own invented scenarios (seeded, so the output is the
 * same on every run). Pre-run cells are stepped by the same cell controller and engine
 * host the extension uses, inside headless Chromium (prerun.ts), so their ledgers and
 * outputs are exactly what a user would get; they replay bit for bit in Node as well
 * (core's arithmetic is engine-independent; `test/unit/demo/replay.test.ts` checks it).
 *
 * Run: `npx tsx demo-notebooks/make_demos.ts`
 *
 * The script checks that each scenario still shows what its prose claims (a divergence, a
 * plateau, a fix) and fails loudly when the engine no longer behaves that way.
 */
import * as fs from 'fs';
import * as path from 'path';
import * as esbuild from 'esbuild';
import { chromium } from 'playwright-core';
import { CHROMIUM, CHROMIUM_ARGS } from '../test/e2e/harness';
import type { PrerunRequest, PrerunResult } from './prerun';
import { parseSpec } from '../src/experiment';
import { Session } from '../src/core/session';
import { eigenvalues } from '../src/core/linalg';
import { auditGradient } from '../src/core/probe/gradcheck';
import { Rng } from '../src/core/rng';
import type { StepRecord } from '../src/core/state';
import { greenhouseRows, greenhouseSpec, parcelRows, parcelSpec } from './scenarios';

type Json = Record<string, unknown>;

/** A notebook cell as nbformat 4.5 JSON. */
interface NbCell extends Json {
  cell_type: 'markdown' | 'code';
  id: string;
  metadata: Json;
  source: string[];
}

const lines = (text: string): string[] => text.split(/(?<=\n)/);

const markdown = (id: string, text: string): NbCell => ({ cell_type: 'markdown', id, metadata: {}, source: lines(text) });

/** Pre-run requests collected while the notebooks are assembled. */
const pending: PrerunRequest[] = [];
/** Step each pre-run cell must end at for its prose to hold. */
const expectedSteps = new Map<string, number>();

/**
 * The Python cell that loads the %%stepwell magic, so a Python kernel running the whole notebook
 * without Stepwell's JupyterLab extension (nbconvert --execute, papermill) passes over the
 * stepwell cells with a one-line notice each instead of failing on their YAML.
 */
const loadMagicCell = (id: string): NbCell => ({
  cell_type: 'code',
  id,
  metadata: {},
  source: lines(`# Only for a Python kernel that runs this notebook without Stepwell's JupyterLab extension
# (nbconvert --execute, papermill): each stepwell cell below then prints a one-line notice.
%load_ext stepwell
`),
  outputs: [],
  execution_count: null
});

/** A stepwell cell; a non-zero action pre-runs it (in Chromium, see prerun.ts). */
function stepwellCell(id: string, spec: string, action: number | 'diverge'): NbCell {
  if (action !== 0) pending.push({ id, spec, action });
  return { cell_type: 'code', id, metadata: {}, source: lines(spec), outputs: [], execution_count: null };
}

/** Bundles prerun.ts, runs every pending request in headless Chromium, fills the cells in. */
async function prerunInChromium(cells: NbCell[]): Promise<void> {
  const bundle = await esbuild.build({
    entryPoints: [path.join(__dirname, 'prerun.ts')],
    bundle: true,
    format: 'iife',
    platform: 'browser',
    write: false,
    logLevel: 'silent'
  });
  const browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
  try {
    const page = await browser.newPage();
    await page.addScriptTag({ content: bundle.outputFiles[0].text });
    const results = (await page.evaluate(
      `stepwellPrerun(${JSON.stringify(pending)})`
    )) as PrerunResult[];
    for (const r of results) {
      const cell = cells.find(c => c.id === r.id);
      if (cell === undefined) throw new Error(`no cell ${r.id}`);
      const head = (r.metadata.stepwell as { branches: { head: { step: number } }[] }).branches[0].head.step;
      const expected = expectedSteps.get(r.id);
      // The prose was computed in Node; check that the browser-made ledger tells the same story.
      if (expected !== undefined && head !== expected) throw new Error(`cell ${r.id}: Chromium stopped at step ${head}, the prose says ${expected}`);
      cell.metadata = r.metadata;
      cell.outputs = r.outputs;
    }
    console.log(`pre-ran ${results.length} cells in Chromium ${browser.version()}`);
  } finally {
    await browser.close();
  }
}

/** Largest Hessian eigenvalue at the session's current weights (dense, from exact Hv products). */
function lambdaMax(s: Session): number {
  const p = s.objective.parameterCount;
  const h = new Float64Array(p * p);
  const e = new Float64Array(p);
  const out = new Float64Array(p);
  for (let i = 0; i < p; i++) {
    e.fill(0);
    e[i] = 1;
    s.objective.hvp(s.parameters, e, out);
    h.set(out, i * p);
  }
  for (let i = 0; i < p; i++) for (let j = 0; j < i; j++) h[i * p + j] = h[j * p + i] = (h[i * p + j] + h[j * p + i]) / 2;
  return Math.max(...eigenvalues(h, p));
}

function session(spec: string): Session {
  const parsed = parseSpec(spec);
  if (!parsed.ok) throw new Error(`spec does not parse: ${parsed.errors.map(e => e.message).join('; ')}`);
  return Session.create(parsed.experiment);
}

const g3 = (x: number): string => x.toPrecision(3);

/** The per-layer update ratios of a record, for prose. */
const ratios = (r: StepRecord): string => r.layers.map(l => l.updateRatio.toExponential(1)).join(', ');

async function greenhouse(): Promise<NbCell[]> {
  const train = greenhouseRows(1, 60);
  const held = greenhouseRows(2, 20);
  const bad = 0.9;
  const good = 0.5;
  const badSpec = greenhouseSpec(bad, train, held, 'The recipe as first tried: η = 0.9.');
  const goodSpec = greenhouseSpec(good, train, held, 'The fix: η = 0.5, below 2/λmax at the start.');
  const probe = session(badSpec);
  const l0 = lambdaMax(probe);
  const start = probe.initialRecord().loss;
  const records = probe.step(60);
  // Diverged: above 1000× the starting loss (the core's default divergence factor) or not finite.
  const blow = records.findIndex(r => !Number.isFinite(r.loss) || r.loss > 1e3 * start) + 1;
  const last = records[records.length - 1];
  const lowest = records.reduce((m, r) => (r.loss < m.loss ? r : m), records[0]);
  const turn = records.find(r => r.step > lowest.step && r.loss > 10 * lowest.loss);
  if (blow === 0 || turn === undefined) throw new Error('greenhouse: η = 0.9 no longer diverges within 60 steps');
  const atBlow = records[blow - 1];
  const atBlowSession = session(badSpec);
  atBlowSession.step(blow);
  const lBlow = lambdaMax(atBlowSession);
  if (!(lBlow > 2 / bad)) throw new Error('greenhouse: λmax at the divergence is no longer above 2/η');
  if (!atBlow.layers.every(l => l.updateRatio > 0.1)) throw new Error('greenhouse: the update ratios at the divergence are no longer large');
  if (bad * l0 / 2 <= 1 || good * l0 / 2 >= 1) throw new Error('greenhouse: the stability story no longer holds at step 0');
  const fixed = session(goodSpec);
  const fixedRecs = fixed.step(200);
  const fixedLoss = fixedRecs[fixedRecs.length - 1].loss;
  if (!(fixedLoss < lowest.loss)) throw new Error('greenhouse: η = 0.5 no longer beats the diverging run');

  return [
    markdown('gh-intro', `# Greenhouse humidity sensor: a calibration that blows up

A capacitive humidity sensor in a greenhouse reads high when its circuit board warms up. We fit a small
network that maps the sensor's raw reading and the board temperature to the humidity a reference
hygrometer measured (60 calibration rows, 20 held out; the data are invented for this demo).

The first recipe, plain gradient descent with η = ${bad}, trained for a few steps and then exploded. The
cell below holds that experiment exactly as it was left after **Run until…** "loss grows above × start" = 1000:
it opens at step ${blow} **without re-running**,
because its whole state is stored in the notebook. Press **Verify** to replay it from the seed and check
that the stored trajectory is reproduced bit for bit.
`),
    loadMagicCell('gh-kernel'),
    (expectedSteps.set('gh-diverging', blow), stepwellCell('gh-diverging', badSpec, 'diverge')),
    markdown('gh-diagnosis', `## What the readouts say

* **Trace**: the training loss falls to ${g3(lowest.loss)} at step ${lowest.step}, then grows by orders of
  magnitude from step ${turn.step} and passes a thousand times its starting value at step ${blow}, where the
  run stopped. (Stepping on, it reaches ${last.loss.toExponential(1)} by step 60.)
* **Layers**: at step ${blow} the update ratios ‖ΔW‖/‖W‖ of the two layers are ${ratios(atBlow)}, far above the
  usual 1e-3 (a rule of thumb): each step changes the weights by about their own size or more.
* **Curvature**: open the Curvature tab and press *Measure curvature* — at step ${blow} the sharpest
  directions lie far above the stability limit (λmax ≈ ${g3(lBlow)} against 2/η ≈ ${g3(2 / bad)}). Then
  **Rewind…** to step 0, put 20 in the Step ×N box and press *Step ×20 tracking λmax*: the largest
  Hessian eigenvalue starts at λmax ≈ ${g3(l0)}, already above the limit. Gradient descent on a
  quadratic is stable only while η·λmax/2 < 1, that is η < 2/λmax ≈ ${g3(2 / l0)}. With η = ${bad},
  η·λmax/2 ≈ ${g3((bad * l0) / 2)}: the direction of sharpest curvature is over-corrected at every step and
  the error along it grows.

The rule is about the local curvature along the trajectory, which changes as the weights move; it
is a strong hint, not a proof. The fix is to step below the limit with a margin: η = ${good}
(η·λmax/2 ≈ ${g3((good * l0) / 2)} at step 0).

Run the next cell (**Shift+Enter**) to start its session, then press **Step ×N** a few times or use
**Run until…** with "training loss ≤ 0.002".
`),
    stepwellCell('gh-fixed', goodSpec, 0),
    markdown('gh-decision', `## Decision

η = ${good}, because λmax ≈ ${g3(l0)} at the start makes η = ${bad} unstable (η·λmax/2 ≈ ${g3((bad * l0) / 2)} > 1);
with η = ${good} the loss reaches about ${g3(fixedLoss)} after 200 steps on this data.

*This diagnosis comes from a small proxy model of the calibration. It is evidence about this setup and
recipe, not a guarantee of how a larger model or the full sensor log will behave.*
`)
  ];
}

async function parcels(): Promise<NbCell[]> {
  const train = parcelRows(3, 90);
  const held = parcelRows(4, 30);
  const tiny = 0.05;
  const badSpec = parcelSpec(tiny, train, held, `The recipe as first tried: initial weights scaled by gain ${tiny}.`);
  const goodSpec = parcelSpec(1, train, held, 'The fix: gain 1, the fan-in variance of lecun-normal.');
  const ln3 = Math.log(3);
  const probe = session(badSpec);
  const recs = probe.step(100);
  const plateau = recs.every(r => Math.abs(r.loss - ln3) < 0.01);
  if (!plateau) throw new Error('parcels: gain 0.05 no longer sits on the plateau for 100 steps');
  const fixed = session(goodSpec).step(100);
  const fixedLoss = fixed[fixed.length - 1].loss;
  if (!(fixedLoss < 0.5 * ln3)) throw new Error('parcels: gain 1 no longer leaves the plateau within 100 steps');
  const end = recs[recs.length - 1];
  if (!(end.layers[0].updateRatio < 1e-3)) throw new Error('parcels: the first layer no longer barely moves');
  const audit = auditGradient(probe.objective, probe.parameters, { sample: 200, rng: Rng.fromSeed(5).fork('audit-100') });
  if (audit.verdict === 'wrong' || !(audit.bestOverSweep.maxRelError < 1e-4)) {
    throw new Error(`parcels: the gradient audit now says ${audit.verdict}, best over the sweep ${audit.bestOverSweep.maxRelError}`);
  }

  return [
    markdown('ps-intro', `# Parcel sorter: a classifier that never starts learning

A depot sends each parcel down one of three chutes — flats, small parcels, bulky items — from its scanned
weight, longest side and thickness. A four-layer tanh network should learn this easily (90 training rows,
30 held out; the data are invented for this demo). Yet with the first recipe the loss sat at about
1.0986 for a hundred steps. That value is ln 3: the network outputs the same probability for all three
chutes, no better than a guess.

The cell below holds that experiment at step 100, restored from the notebook without re-running.
`),
    loadMagicCell('ps-kernel'),
    stepwellCell('ps-plateau', badSpec, 100),
    markdown('ps-diagnosis', `## What the readouts say

* **Trace**: flat at ln 3 ≈ ${ln3.toFixed(4)} from step 0 to step 100 — a plateau, not a slow descent.
* **Layers**: at step 100 the update ratios ‖ΔW‖/‖W‖ of the four layers are ${ratios(end)}; the first
  layer's is far below the usual 1e-3 (a rule of thumb), and its gradient norm is only
  ${end.layers[0].gradNorm.toExponential(1)} (the fixed recipe below starts at ${fixed[0].layers[0].gradNorm.toExponential(1)}). The signal that reaches the first layers is tiny, because each
  layer multiplies it by weights scaled down twentyfold.
* The spec says \`gain: ${tiny}\`: the initial weights have 1/20 of the standard deviation that
  lecun-normal's fan-in rule (variance 1/fan_in, LeCun et al. 1998) gives. With four tanh layers the
  forward signal and the backward gradient both shrink by roughly that factor per layer.
* **Audit**: press *Run gradient audit* in the Audit tab. At step 100 the overall verdict is
  *${audit.verdict}* (worst relative error ${audit.maxRelError.toExponential(1)}), but the step-size sweep
  falls to ${audit.bestOverSweep.maxRelError.toExponential(1)} at h = ${audit.bestOverSweep.h.toExponential(0)}: the
  gradient entries are so small that finite differences at the default h lose digits to round-off. The
  derivatives are right; the plateau is the initialization's doing, not a bug.

The fix: \`gain: 1\`. Run the next cell, then **Step ×N** with N = 100 and compare the trace.
`),
    stepwellCell('ps-fixed', goodSpec, 0),
    markdown('ps-decision', `## Decision

Initialize with lecun-normal at gain 1: with gain ${tiny} the loss stayed at ln 3 for 100 steps; with gain 1 it
reaches about ${g3(fixedLoss)} after 100 steps on this data.

*This is a small proxy of the sorting model. It shows that the initialization scale can stall a tanh
network of this depth; it is not a guarantee about the production model.*
`)
  ];
}

function notebook(cells: NbCell[]): Json {
  return {
    cells,
    // The Python kernel of ipykernel, as a real Jupyter server offers it, for the ordinary code
    // cells; stepwell cells never need it. Without kernelspec and language_info JupyterLab writes
    // them itself, so the notebook would turn dirty the moment it opens.
    metadata: {
      stepwell_demo: true,
      kernelspec: { display_name: 'Python 3 (ipykernel)', language: 'python', name: 'python3' },
      language_info: { name: 'python' }
    },
    nbformat: 4,
    nbformat_minor: 5
  };
}

async function main(): Promise<void> {
  const dir = __dirname;
  const write = (name: string, cells: NbCell[]): void => {
    fs.writeFileSync(path.join(dir, name), JSON.stringify(notebook(cells), null, 1) + '\n');
    console.log(`wrote demo-notebooks/${name}`);
  };
  const gh = await greenhouse();
  const ps = await parcels();
  await prerunInChromium([...gh, ...ps]);
  write('greenhouse-humidity-sensor.ipynb', gh);
  write('parcel-sorter-plateau.ipynb', ps);
}

main().catch(error => {
  console.error(error);
  process.exit(1);
});
