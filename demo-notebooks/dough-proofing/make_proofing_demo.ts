/**
 * Writes demo-notebooks/dough-proofing/dough-proofing.ipynb, an invented scenario whose hidden layer uses an
 * activation the user wrote as a formula (`activation: { expr, derivative }`), with the deeper
 * readouts taken on it: the line profile, a 2-D slice, the learning-rate range test, the
 * batch-size comparison and the precision tolerance, plus the gradient audit of the user's
 * derivative. The cell is stepped by a script of product actions through the same cell
 * controller and engine host the extension uses, inside headless Chromium (../prerun.ts, the page
 * clock stopped so regenerating gives the same file); the script checks the scenario's claims
 * on what the product recorded and fails loudly when they no longer hold.
 *
 * Run: `npx tsx demo-notebooks/dough-proofing/make_proofing_demo.ts`
 */
import * as fs from 'fs';
import * as path from 'path';
import { prerunInChromium } from '../prerun-chromium';
import type { PrerunRequest } from '../prerun';
import { decodeLoose } from '../../src/ledger/readouts';
import { deeperFromLedger } from '../../src/worker/deeper';

type Json = Record<string, unknown>;

const NOTEBOOK = 'dough-proofing.ipynb';

/** The cell's spec: the baker's own saturating activation (softsign, written out with its derivative). */
export const PROOFING_SPEC = `%%stepwell
# stepwell: minutes a dough needs to proof, from a bakery's log, with our own saturating activation
seed: 11
model:
  inputs: 3                 # dough temperature, hydration, yeast share (each scaled to about -1..1)
  layers:
    - { units: 6, activation: { expr: "x / (1 + abs(x))", derivative: "1 / (1 + abs(x))^2" } }
    - { units: 1 }
  init: glorot-normal
data:
  x:
    - [-0.9, 0.2, -0.4]
    - [-0.6, -0.7, 0.1]
    - [-0.3, 0.5, 0.8]
    - [0.0, -0.1, -0.9]
    - [0.2, 0.9, 0.3]
    - [0.4, -0.5, 0.6]
    - [0.7, 0.3, -0.2]
    - [0.9, -0.9, 0.9]
    - [-0.8, 0.8, 0.5]
    - [-0.1, -0.4, -0.6]
    - [0.5, 0.1, 0.0]
    - [0.8, 0.6, -0.7]
  y: [1.32, 1.05, 0.52, 0.71, 0.18, -0.12, -0.21, -0.78, 0.76, 0.69, -0.17, -0.35]   # proofing minutes, scaled
loss: mse
recipe: { optimizer: sgd, lr: 0.3, batch: 4 }
`;

const STEPS = 60;
const lines = (text: string): string[] => text.split(/(?<=\n)/);
const markdown = (id: string, text: string): Json => ({ cell_type: 'markdown', id, metadata: {}, source: lines(text) });
const g3 = (x: number | null | undefined): string => (x === null || x === undefined ? '—' : x.toPrecision(3));

async function main(): Promise<void> {
  const request: PrerunRequest = {
    id: 'dp-proofing',
    spec: PROOFING_SPEC,
    actions: [
      { do: 'step', n: STEPS },
      { do: 'audit' },
      { do: 'noise' },
      { do: 'deeper', choice: { kind: 'line' } },
      { do: 'deeper', choice: { kind: 'plane', directions: 'random', planePoints: '21' } },
      { do: 'deeper', choice: { kind: 'range', rangeFrom: '1e-3', rangeTo: '30', rangeSteps: '40' } },
      { do: 'deeper', choice: { kind: 'batch', batchSizes: '2, 4, 12', batchExamples: '240' } },
      { do: 'deeper', choice: { kind: 'precision', bits: '16, 10, 8, 6, 4' } },
      // the batch-size question as branches too: the same recipe from step 0 with batches of 12 rows
      { do: 'fork', atStep: 0, set: { batch: 12 }, name: 'batch-12' },
      { do: 'step', n: STEPS / 3 },
      { do: 'switch', branch: 'main' }
    ]
  };
  const [r] = await prerunInChromium([request]);
  const ledger = r.metadata.stepwell as { branches: { readouts?: { deeper?: unknown } }[] };
  const stored = ledger.branches[0].readouts?.deeper;
  const kept = deeperFromLedger(decodeLoose(stored, 'deeper'));
  const { line, plane, range, batch, precision } = kept;
  if (!line || !plane || !range || !batch || !precision) throw new Error(`proofing: the ledger keeps only ${Object.keys(kept).join(', ')} of the five deeper readouts`);
  if (line.step !== STEPS) throw new Error(`proofing: the line profile was taken at step ${line.step}, not ${STEPS}`);
  const audit = r.diagnoses.main?.findings.find((f) => f.id === 'gradient-mismatch');
  if (audit !== undefined) throw new Error('proofing: the audit now finds a gradient mismatch in the written derivative');
  const rr = range.result;
  if (rr.suggested === null || rr.limit === null || rr.limit.largestStableLr === null) throw new Error('proofing: the range test no longer suggests a range beside a stability limit');
  const b8 = precision.result.rows.find((row) => row.bits === 8);
  if (b8 === undefined) throw new Error('proofing: no 8-bit row');
  const best = batch.result.best;
  const fork = r.branches.find((b) => b.name === 'batch-12');
  if (fork === undefined || fork.step !== STEPS / 3) throw new Error('proofing: the pre-run made no batch-12 branch');

  const cell = { cell_type: 'code', id: r.id, metadata: r.metadata, source: lines(PROOFING_SPEC), outputs: r.outputs, execution_count: null };
  const nb = {
    cells: [
      markdown('dp-intro', `# Dough proofing: a home-made activation and the deeper readouts

A small bakery logs, for each batch of dough, its temperature, its hydration, the share of yeast and the
minutes it took to proof. The head baker wants a tiny model to plan the ovens, and wrote the hidden
layer's activation herself as a formula — the saturating \`x / (1 + |x|)\` with its derivative written out —
because proofing time stops responding to warmth beyond a point. (The scenario and its numbers are
invented for this demo; \`make_formula_demo.ts\` writes this notebook.)

The cell below was stepped ${STEPS} times with mini-batches of 4 rows, then each deeper readout was taken on
the **Deeper** tab. Open the tab and pick a readout to see its figure; each says the step and branch it
was taken at, and is marked stale once the branch moves on.
`),
      { cell_type: 'code', id: 'dp-kernel', metadata: {}, source: lines(`# Only for a Python kernel that runs this notebook without Stepwell's JupyterLab extension
# (nbconvert --execute, papermill): the stepwell cell below then prints a one-line notice.
%load_ext stepwell
`), outputs: [], execution_count: null },
      cell,
      markdown('dp-readouts', `## What the readouts say (at step ${STEPS})

* **Audit**: the written derivative matches central differences (no \`gradient-mismatch\` finding).
* **Line profile**: along the next update the quadratic model's minimum is at t = ${g3(line.result.update.quadraticMinimum)} steps and
  Brent's minimum at t = ${g3(line.result.update.minimum.t)}.
* **Learning-rate range test** (a throwaway run from step ${rr.startStep}): suggested η from ${g3(rr.suggested.low)} to
  ${g3(rr.suggested.high)}; the stability limit ${rr.limit.formula} at the current sharpness is ${g3(rr.limit.largestStableLr)}.
* **Batch sizes** 2, 4 and 12 at ${batch.result.budget} examples each: the lowest final loss comes from batch ${best ?? '— (all diverged)'};
  the gradient noise scale there is B = ${g3(batch.result.noiseScale.noiseScale)}.
* **Precision**: with the weights rounded to 8 significant bits the loss changes by ${g3(b8.lossChange)}.
* **Branch batch-12**: the same recipe from step 0 with batches of 12 rows, ${fork.step} steps (the same
  ${STEPS * 4} examples as main's ${STEPS} steps of 4). The **Compare** tab shows both against examples seen,
  beside the gradient noise scale.

\`stepwell verify ${NOTEBOOK}\` replays the cell from its seed bit for bit. A 31-parameter proxy of a
bakery's log is not a production model: these readouts describe this model near these weights.
`)
    ],
    metadata: {
      stepwell_demo: true,
      kernelspec: { display_name: 'Python 3 (ipykernel)', language: 'python', name: 'python3' },
      language_info: { name: 'python' }
    },
    nbformat: 4,
    nbformat_minor: 5
  };
  fs.writeFileSync(path.join(__dirname, NOTEBOOK), JSON.stringify(nb, null, 1) + '\n');
  console.log(`wrote demo-notebooks/dough-proofing/${NOTEBOOK} (range ${g3(rr.suggested.low)}–${g3(rr.suggested.high)}, limit ${g3(rr.limit.largestStableLr)}, best batch ${best})`);
}

main().catch((error) => {
  console.error(error);
  process.exit(1);
});
