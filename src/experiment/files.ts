/**
 * Files a spec names — data (`data.file`, `data.targetFile`, `data.heldOut.file`, …) and initial
 * weights (`model.weights.file`) — turned into the numbers of the experiment. The experiment layer
 * stays pure: the caller reads the bytes (the CLI from disk next to the spec, the notebook app
 * through the Jupyter contents API next to the notebook) and hands them in as a map from the name
 * the spec wrote to the file's bytes; {@link specFileNames} says which names to fetch.
 *
 * Every reader problem becomes a spec error at the key that named the file, with the reader's
 * message (file, row, column, layer, shapes).
 */
import { activationProblem, dataLimits, DEFAULT_SPEC_LIMITS, type SpecLimits } from './limits';
import { dataHash, readTable, readWeights, sha256Hex, DataFileError, type TableData, type TableRequest, type TargetKind } from '../core/data';
import type { DataOrigin, DataSetup, Experiment, FileOrigin, LayerWeights, LossName } from '../core/setup';
import type { CheckProblem } from './checks';
import type { Path } from './path';

/** The bytes of the files a spec names, keyed by the name as written in the spec. */
export type SpecFiles = ReadonlyMap<string, Uint8Array>;

type Obj = Record<string, unknown>;
const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);
const str = (v: unknown): string | undefined => (typeof v === 'string' && v !== '' ? v : undefined);

/** One file reference of a spec: where it is written and the name. */
export interface FileRef {
  path: Path;
  name: string;
}

/** Every file a spec value names, in reading order (data, targets, held-out, weights). */
export function specFileRefs(spec: unknown): FileRef[] {
  const out: FileRef[] = [];
  if (!isObj(spec)) return out;
  const data = spec.data;
  if (isObj(data)) {
    for (const key of ['file', 'targetFile']) {
      const n = str(data[key]);
      if (n !== undefined) out.push({ path: ['data', key], name: n });
    }
    if (isObj(data.heldOut)) {
      for (const key of ['file', 'targetFile']) {
        const n = str(data.heldOut[key]);
        if (n !== undefined) out.push({ path: ['data', 'heldOut', key], name: n });
      }
    }
  }
  if (isObj(spec.model) && isObj(spec.model.weights)) {
    const n = str(spec.model.weights.file);
    if (n !== undefined) out.push({ path: ['model', 'weights', 'file'], name: n });
  }
  return out;
}

/** The distinct file names a spec value names (what a caller must read and pass in). */
export function specFileNames(spec: unknown): string[] {
  return [...new Set(specFileRefs(spec).map((r) => r.name))];
}

/** Data and weights read from files, ready for the normalized experiment. */
export interface LoadedFiles {
  data?: DataSetup;
  weights?: { layers: LayerWeights[]; origin: FileOrigin };
}

const TARGET_KIND: Record<LossName, TargetKind> = { mse: 'value', 'cross-entropy': 'class', 'binary-cross-entropy': 'binary', expression: 'value' };

function origin(name: string, bytes: Uint8Array): FileOrigin {
  return { name, bytes: bytes.length, sha256: sha256Hex(bytes) };
}

/**
 * Reads the files of a spec value that already passed the schema and the cross-field checks.
 * @returns what was read, and one problem per file that could not be read or does not fit the model
 */
export function loadSpecFiles(spec: Obj, files: SpecFiles | undefined, limits: SpecLimits = DEFAULT_SPEC_LIMITS, unread?: ReadonlyMap<string, string>): { loaded: LoadedFiles; problems: CheckProblem[] } {
  const readLimits = dataLimits(limits);
  const problems: CheckProblem[] = [];
  const loaded: LoadedFiles = {};
  const refs = specFileRefs(spec);
  if (refs.length === 0) return { loaded, problems };
  const bytesOf = (ref: FileRef): Uint8Array | undefined => {
    const b = files?.get(ref.name);
    const why = unread?.get(ref.name) ?? (files === undefined ? 'this caller reads no files (inline the data, or use the CLI or the notebook app)' : 'the file is missing or could not be fetched');
    if (b === undefined) problems.push({ path: ref.path, message: `${ref.name} was not read: ${why}` });
    return b;
  };
  function guard<T>(path: Path, read: () => T): T | undefined {
    try {
      return read();
    } catch (e) {
      if (e instanceof DataFileError) {
        problems.push({ path, message: e.message });
        return undefined;
      }
      throw e;
    }
  }
  const model = isObj(spec.model) ? spec.model : {};
  const units = Array.isArray(model.layers) ? model.layers.map((l) => (isObj(l) ? (l.units as number) : 0)) : [];
  const inputs = model.inputs as number;
  const loss = (typeof spec.loss === 'string' ? spec.loss : 'mse') as LossName;
  const data = spec.data;
  if (isObj(data) && str(data.file) !== undefined) {
    const req: TableRequest = {
      features: data.features as TableRequest['features'],
      target: data.target as TableRequest['target'],
      classes: data.classes as string[] | undefined,
      header: data.header as boolean | 'auto' | undefined,
      delimiter: data.delimiter as string | undefined,
      targetKind: TARGET_KIND[loss],
    };
    const read = (at: Path, obj: Obj, request: TableRequest): { table: TableData; files: FileOrigin[] } | undefined => {
      const main: FileRef = { path: [...at, 'file'], name: obj.file as string };
      const bytes = bytesOf(main);
      const tname = str(obj.targetFile);
      const tref: FileRef | undefined = tname !== undefined ? { path: [...at, 'targetFile'], name: tname } : undefined;
      const tbytes = tref !== undefined ? bytesOf(tref) : undefined;
      if (bytes === undefined || (tref !== undefined && tbytes === undefined)) return undefined;
      const table = guard(main.path, () => readTable(bytes, main.name, request, tref && tbytes ? { bytes: tbytes, file: tref.name } : undefined, readLimits));
      if (table === undefined) return undefined;
      return { table, files: [origin(main.name, bytes), ...(tref && tbytes ? [origin(tref.name, tbytes)] : [])] };
    };
    const train = read(['data'], data, req);
    const held = train !== undefined && isObj(data.heldOut) ? read(['data', 'heldOut'], data.heldOut, { ...req, classes: train.table.classes ?? req.classes }) : undefined;
    if (train !== undefined) {
      const t = train.table;
      fitModel(t, ['data', 'file'], inputs, units[units.length - 1], loss, problems);
      const crowded = activationProblem(Math.max(t.rows, held?.table.rows ?? 0), units, limits, ['data', 'file']);
      if (crowded !== undefined) problems.push(crowded);
      if (held !== undefined) {
        fitModel(held.table, ['data', 'heldOut', 'file'], inputs, units[units.length - 1], loss, problems);
        if (held.table.targets !== t.targets) problems.push({ path: ['data', 'heldOut', 'file'], message: `${held.files[0].name} has ${held.table.targets} target columns, the training data ${t.targets}` });
      }
      const recipe = isObj(spec.recipe) ? spec.recipe : {};
      for (const key of ['batch', 'curvatureBatch']) {
        const b = recipe[key];
        if (typeof b === 'number' && b > t.rows) problems.push({ path: ['recipe', key], message: `recipe.${key} is ${b}, but ${train.files[0].name} has only ${t.rows} rows` });
      }
      const setup: DataSetup = { rows: t.rows, inputs: t.inputs, targets: t.targets, x: t.x, y: t.y };
      if (held !== undefined) setup.heldOut = { rows: held.table.rows, x: held.table.x, y: held.table.y };
      const o: DataOrigin = { files: [...train.files, ...(held?.files ?? [])], hash: dataHash(setup, t.classes), reading: t.reading };
      if (t.classes) o.classes = t.classes;
      setup.origin = o;
      loaded.data = setup;
    }
  }
  if (isObj(model.weights) && str(model.weights.file) !== undefined) {
    const ref: FileRef = { path: ['model', 'weights', 'file'], name: model.weights.file as string };
    const bytes = bytesOf(ref);
    if (bytes !== undefined) {
      const layers = guard(ref.path, () => readWeights(bytes, ref.name, { inputs, units }, readLimits));
      if (layers !== undefined) loaded.weights = { layers, origin: origin(ref.name, bytes) };
    }
  }
  return { loaded, problems };
}

/** Checks a table against the model's input width and output units. */
function fitModel(t: TableData, at: Path, inputs: number, outUnits: number | undefined, loss: LossName, problems: CheckProblem[]): void {
  const name = t.reading.format;
  if (t.inputs !== inputs) problems.push({ path: at, message: `the ${name} data have ${t.inputs} feature columns, but model.inputs is ${inputs}` });
  if (outUnits === undefined) return;
  if (loss === 'cross-entropy') {
    let top = 0;
    for (let i = 0; i < t.y.length; i++) top = Math.max(top, t.y[i]);
    const count = t.classes?.length ?? top + 1;
    if (count > outUnits) problems.push({ path: at, message: `the data have ${count} classes${t.classes ? ` (${t.classes.join(', ')})` : ''}, but the last layer has ${outUnits} units (one logit per class)` });
  } else if (t.targets !== outUnits) {
    problems.push({ path: at, message: `the data have ${t.targets} target column${t.targets === 1 ? '' : 's'}, but the last layer has ${outUnits} units` });
  }
}

/**
 * The files an experiment read — data, targets and held-out data (`setup.data.origin`), then the
 * initial weights (`model.weightsOrigin`) — each name once, with size and SHA-256 of the bytes;
 * what a ledger records per branch so a replaced file is found by its content.
 */
export function usedFiles(e: Experiment): FileOrigin[] {
  const all = [...(e.setup.data?.origin?.files ?? []), ...(e.setup.model.kind === 'network' && e.setup.model.weightsOrigin ? [e.setup.model.weightsOrigin] : [])];
  const seen = new Set<string>();
  return all.filter((f) => !seen.has(f.name) && (seen.add(f.name), true)).map((f) => ({ name: f.name, bytes: f.bytes, sha256: f.sha256 }));
}
