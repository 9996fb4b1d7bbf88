/**
 * Writes the demo notebooks from our own invented scenarios (seeded, so the output is the
 * same on every run). Each notebook holds one stepwell cell with a failing branch, the branch
 * "Try as branch" made from one of its findings, and the decision record the product wrote
 * below it. The cells are stepped by a script of product actions (step, track the sharpness, try
 * a finding's proposal, measure, write the record) through the same cell controller and engine
 * host the extension uses, inside headless Chromium (prerun.ts), so their ledgers, outputs and
 * records are exactly what a user would get; they replay bit for bit in Node as well (core's
 * arithmetic is engine-independent; `test/unit/demo/replay.test.ts` checks it). The prose
 * quotes what the cell shows (the findings' statements, sources and proposals, the verdicts,
 * the initialization check) from the pre-run itself, formatted as the cell formats it.
 *
 * Run: `npx tsx demo-notebooks/make_demos.ts`
 *
 * The script checks that each scenario still shows what its prose claims (a divergence and its
 * finding, a plateau and its finding, a fix that the proposal makes) — in Node with the core
 * directly, and in Chromium on what the product recorded — and fails loudly when it no longer does.
 */
import * as fs from 'fs';
import * as path from 'path';
import { prerunInChromium } from './prerun-chromium';
import type { PrerunRequest, PrerunResult } from './prerun';
import { parseSpec } from '../src/experiment';
import { Session } from '../src/core/session';
import type { Finding } from '../src/worker/protocol';
import { fmt } from '../src/ui/summary';
import { measuredLine, proposalText, sourceText } from '../src/ui/findings-strip';
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

/** A pre-run stepwell cell and the record cell the product wrote below it. */
function stepwellCells(r: PrerunResult, spec: string): NbCell[] {
  const cell: NbCell = { cell_type: 'code', id: r.id, metadata: r.metadata, source: lines(spec), outputs: r.outputs, execution_count: null };
  if (r.record === null) return [cell];
  const rec: NbCell = { cell_type: 'markdown', id: `${r.id}-record`, metadata: r.record.metadata, source: lines(r.record.source) };
  if (Object.keys(r.record.attachments).length > 0) rec.attachments = r.record.attachments;
  return [cell, rec];
}

function session(spec: string): Session {
  const parsed = parseSpec(spec);
  if (!parsed.ok) throw new Error(`spec does not parse: ${parsed.errors.map(e => e.message).join('; ')}`);
  return Session.create(parsed.experiment);
}

/** A branch of a pre-run result, or an error naming what the scenario expected. */
function branchOf(r: PrerunResult, test: (b: PrerunResult['branches'][number]) => boolean, what: string): PrerunResult['branches'][number] {
  const b = r.branches.find(test);
  if (b === undefined) throw new Error(`${r.id}: no ${what} among ${r.branches.map(x => x.name).join(', ')}`);
  return b;
}

/** A finding of a branch as the cell showed it, or an error naming what the prose needs. */
function findingOf(r: PrerunResult, branch: string, id: string): Finding {
  const f = r.diagnoses[branch]?.findings.find(x => x.id === id);
  if (f === undefined) throw new Error(`${r.id}: branch ${branch} no longer shows the finding ${id} (it shows ${r.diagnoses[branch]?.findings.map(x => x.id).join(', ') ?? 'nothing'})`);
  return f;
}

/** A finding quoted as the strip shows it: severity, id, statement, the number against its threshold, the source. */
function quote(f: Finding): string {
  const where = f.step !== null ? ` (step ${f.step}${f.layer !== null ? `, layer ${f.layer}` : ''})` : '';
  const proposal = f.proposal === null ? '' : `\n  Proposal: from step ${f.proposal.atStep}, ${proposalText(f.proposal.set)}.`;
  return `* **${f.severity}** \`${f.id}\`${where}: ${f.statement}\n  ${measuredLine(f)}; source: ${sourceText(f.source)}.${proposal}`;
}

/** The findings of a branch as a list, or a sentence saying there are none. */
function quoteAll(r: PrerunResult, branch: string): string {
  const fs = r.diagnoses[branch]?.findings ?? [];
  return fs.length === 0 ? `The findings strip of **${branch}** is empty: no rule fires.` : fs.map(quote).join('\n');
}

/** The findings of a fix branch under a line that names it (or the sentence saying there are none); fails if one of `gone` still fires there. */
function quoteFix(r: PrerunResult, branch: string, gone: readonly string[]): string {
  const fs = r.diagnoses[branch]?.findings ?? [];
  const left = fs.filter(f => gone.includes(f.id)).map(f => f.id);
  if (left.length > 0) throw new Error(`${r.id}: the fix branch ${branch} still shows ${left.join(', ')}`);
  return fs.length === 0 ? quoteAll(r, branch) : `The findings strip of **${branch}** no longer shows the failure; what it shows instead:\n\n${quoteAll(r, branch)}`;
}

/** Steps the greenhouse probe looks at for the divergence (the main branch stops where it passes 1000× its start). */
const GH_LOOK = 20;
const GH_FIX_STEPS = 60;
/** The greenhouse failure's findings, which the fix branch must not show. */
const FAILURES = ['step-size-unstable', 'diverged'];

function greenhouseRequest(): { request: PrerunRequest; spec: string; probe: Json } {
  const train = greenhouseRows(1, 60);
  const held = greenhouseRows(2, 20);
  const bad = 0.9;
  const spec = greenhouseSpec(bad, train, held, 'The recipe as first tried: η = 0.9.');
  const s = session(spec);
  const start = s.initialRecord().loss;
  const records = s.step(GH_LOOK);
  const blow = records.findIndex(r => !Number.isFinite(r.loss) || r.loss > 1e3 * start) + 1;
  if (blow === 0) throw new Error(`greenhouse: η = ${bad} no longer diverges within ${GH_LOOK} steps`);
  return {
    spec,
    probe: { blow, bad },
    request: {
      id: 'gh-calibration',
      spec,
      actions: [
        // Up to the step where the loss passes a thousand times its start, as Run until… would stop.
        { do: 'track', n: blow },
        { do: 'try', finding: 'step-size-unstable' },
        { do: 'track', n: GH_FIX_STEPS },
        { do: 'curvature' },
        { do: 'audit' },
        { do: 'switch', branch: 'main' },
        { do: 'record', question: 'Which learning rate keeps the humidity calibration from blowing up?', chosen: '' }
      ]
    }
  };
}

function greenhouseCells(r: PrerunResult, spec: string, p: Json): NbCell[] {
  const fix = branchOf(r, b => b.parent === 'main', 'fixed branch');
  const main = branchOf(r, b => b.parent === null, 'root branch');
  if (!(fix.loss < 0.01) || !(main.loss > 1e3 * fix.loss || !Number.isFinite(main.loss))) {
    throw new Error(`greenhouse: the fix (${fix.loss}) no longer beats the failing run (${main.loss}) by far`);
  }
  const unstable = findingOf(r, 'main', 'step-size-unstable');
  const fixTrace = r.diagnoses[fix.name]?.derived.sharpness;
  if (fixTrace?.verdict.kind !== 'within') throw new Error(`greenhouse: the fix branch's sharpness no longer stays within the limit (${fixTrace?.sentence})`);
  const blow = p.blow as number;
  const bad = p.bad as number;
  return [
    markdown('gh-intro', `# Greenhouse humidity sensor: a calibration that blows up

A capacitive humidity sensor in a greenhouse reads high when its circuit board warms up. We fit a small
network that maps the sensor's raw reading and the board temperature to the humidity a reference
hygrometer measured (60 calibration rows, 20 held out; the data are invented for this demo).

The first recipe, plain gradient descent with η = ${bad}, trained for a few steps and then exploded. The
cell below holds that experiment (branch **main**, ${blow} steps stepped with *Step ×${blow} tracking λmax*) and
the branch **${fix.name}**, which Stepwell made when *Try as branch* was clicked on its \`${unstable.id}\`
finding. Both open **without re-running**, because the whole state is stored in the notebook; **Verify**
replays every branch from the seed and checks that the stored trajectories are reproduced bit for bit.
`),
    loadMagicCell('gh-kernel'),
    ...stepwellCells(r, spec),
    markdown('gh-diagnosis', `## What Stepwell says

The findings strip of branch **main** (hover a finding's numbers, or open *source*, for where its threshold comes from):

${quoteAll(r, 'main')}

*Try as branch* on \`${unstable.id}\` forked **${fix.name}** from step ${fix.forkStep} of main with the proposal and showed it.
Stepped ${GH_FIX_STEPS} times with the sharpness tracked, its **Curvature** tab says: “${fixTrace.sentence}” The
**Compare** tab overlays both branches' losses and sharpness against each one's limit.

${quoteFix(r, fix.name, FAILURES)}

The rule is about the local curvature along the trajectory, which changes as the weights move; it is a
strong hint, not a proof, and this is a small proxy of the real calibration. The decision record above was
written by Stepwell from the comparison (*Write decision record…*); writing it again replaces it.
`)
  ];
}

const PS_STEPS = 100;

function parcelRequest(): { request: PrerunRequest; spec: string; probe: Json } {
  const train = parcelRows(3, 90);
  const held = parcelRows(4, 30);
  const tiny = 0.05;
  const spec = parcelSpec(tiny, train, held, `The recipe as first tried: initial weights scaled by gain ${tiny}.`);
  const ln3 = Math.log(3);
  const recs = session(spec).step(PS_STEPS);
  if (!recs.every(r => Math.abs(r.loss - ln3) < 0.01)) throw new Error(`parcels: gain ${tiny} no longer sits on the plateau for ${PS_STEPS} steps`);
  return {
    spec,
    probe: { tiny },
    request: {
      id: 'ps-sorter',
      spec,
      actions: [
        { do: 'step', n: PS_STEPS },
        { do: 'try', finding: 'init-scale' },
        { do: 'step', n: PS_STEPS },
        { do: 'switch', branch: 'main' },
        { do: 'record', question: 'Why does the parcel sorter never start learning, and which initialization fixes it?', chosen: '' }
      ]
    }
  };
}

function parcelCells(r: PrerunResult, spec: string, p: Json): NbCell[] {
  const main = branchOf(r, b => b.parent === null, 'root branch');
  const fix = branchOf(r, b => b.parent === 'main', 'fixed branch');
  if (!(fix.loss < 0.5 * main.loss)) throw new Error(`parcels: the proposal no longer leaves the plateau within ${PS_STEPS} steps (loss ${fix.loss} against ${main.loss})`);
  const init = r.diagnoses.main?.init;
  if (init === null || init === undefined) throw new Error('parcels: no initialization check on main');
  const l0 = init.chosen.layers[0];
  const scale = findingOf(r, 'main', 'init-scale');
  const flat = findingOf(r, 'main', 'plateau');
  if (r.diagnoses[fix.name]?.findings.some(f => f.id === 'plateau')) throw new Error('parcels: the fix branch still shows a plateau');
  return [
    markdown('ps-intro', `# Parcel sorter: a classifier that never starts learning

A depot sends each parcel down one of three chutes — flats, small parcels, bulky items — from its scanned
weight, longest side and thickness. A four-layer tanh network should learn this easily (90 training rows,
30 held out; the data are invented for this demo). Yet with the first recipe (\`gain: ${p.tiny as number}\`) the training
loss stays at ln 3, the loss of giving every chute the same probability — no better than a guess.

The cell below holds that experiment (branch **main**, step ${main.step}) and the branch **${fix.name}**, which Stepwell
made when *Try as branch* was clicked on its \`${scale.id}\` finding — both restored from the notebook without
re-running.
`),
    loadMagicCell('ps-kernel'),
    ...stepwellCells(r, spec),
    markdown('ps-diagnosis', `## What Stepwell says

The findings strip of branch **main**:

${quoteAll(r, 'main')}

* **Layers › Initialization check**: layer 0's weight spread is ${fmt(l0.weightSpread)} under ${init.chosen.scheme} ×${fmt(init.chosen.gain)},
  against the fan-in rule's ${fmt(l0.ruleSpread)} for ${l0.activation} (ratio ${fmt(l0.ratio)}×); the table beside it shows the
  pre-activation spread each scheme gives at step 0. **Layers › Layer balance over time** shows the update ratios of
  every layer over the ${PS_STEPS} steps against the band around 1e-3.
* The \`${flat.id}\` and \`${scale.id}\` findings propose the same change, so *Try as branch* on either shows the same
  branch: **${fix.name}** changes the setup, so it restarts at step 0 from the same seed, and its loss leaves the plateau.

${quoteFix(r, fix.name, ['plateau'])}

The **Compare** tab overlays both; the decision record above was written from it. This is a small proxy: the
mechanism (a signal that shrinks layer by layer) carries over to a full-size network, the exact numbers do not.
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
  const gh = greenhouseRequest();
  const ps = parcelRequest();
  const ghProbe = gh.probe;
  const psProbe = ps.probe;
  // The records choose the fix branch, whose name "Try as branch" makes: filled in Chromium.
  const [ghResult, psResult] = await prerunInChromium([gh.request, ps.request]);
  // The number of steps was found in Node; check Chromium stepped to the same place.
  const ghMain = ghResult.branches.find(b => b.parent === null);
  if (ghMain?.step !== ghProbe.blow) throw new Error(`greenhouse: Chromium's main branch is at step ${ghMain?.step}, the prose says ${ghProbe.blow}`);
  write('greenhouse-humidity-sensor.ipynb', greenhouseCells(ghResult, gh.spec, ghProbe));
  write('parcel-sorter-plateau.ipynb', parcelCells(psResult, ps.spec, psProbe));
}

main().catch(error => {
  console.error(error);
  process.exit(1);
});
