/**
 * Initial weights from files: named tensors (a safetensors file or a `.npz` archive, e.g. a
 * PyTorch `state_dict` of an `nn.Sequential` of `nn.Linear` layers, names `0.weight`, `0.bias`,
 * `2.weight`, …) or one flat `.npy` vector in Stepwell's layout (layer by layer, weight
 * [out, in] row-major, then bias [out]).
 *
 * Names map to layers by order: each name is PREFIX.weight or PREFIX.bias; prefixes are sorted
 * by their dot-separated parts, numeric parts as numbers (so `10.weight` follows `2.weight`), and
 * the k-th prefix is layer k. Every layer needs a 2-D weight [units, fan_in] and a 1-D bias
 * [units]; a shape mismatch names the layer, the tensor and both shapes.
 */
import type { LayerWeights } from '../setup';
import { DataFileError, inFile } from './errors';
import { DEFAULT_LIMITS, type DataLimits } from './limits';
import { readNpy } from './npy';
import { readNpz } from './npz';
import { readSafetensors, type Tensor } from './safetensors';

/** The layer shapes weights must fit: input width and units per layer. */
export interface LayerShapes {
  inputs: number;
  units: readonly number[];
}

function comparePrefixes(a: string, b: string): number {
  const pa = a.split('.');
  const pb = b.split('.');
  for (let i = 0; i < Math.min(pa.length, pb.length); i++) {
    const na = /^\d+$/.test(pa[i]) ? Number(pa[i]) : NaN;
    const nb = /^\d+$/.test(pb[i]) ? Number(pb[i]) : NaN;
    const c = !Number.isNaN(na) && !Number.isNaN(nb) ? na - nb : pa[i] < pb[i] ? -1 : pa[i] > pb[i] ? 1 : 0;
    if (c !== 0) return c;
  }
  return pa.length - pb.length;
}

const shapeText = (s: readonly number[]): string => `[${s.join(', ')}]`;

/** Maps named tensors to layers (module comment). */
export function layersFromTensors(tensors: ReadonlyMap<string, Tensor>, shapes: LayerShapes, file: string): LayerWeights[] {
  const prefixes = new Map<string, { weight?: string; bias?: string }>();
  for (const name of tensors.keys()) {
    const m = /^(.*)\.(weight|bias)$/.exec(name);
    if (!m) throw new DataFileError(inFile(file, `tensor '${name}' is neither PREFIX.weight nor PREFIX.bias; Stepwell maps the weights and biases of dense layers only`), { file, array: name });
    const entry = prefixes.get(m[1]) ?? {};
    entry[m[2] as 'weight' | 'bias'] = name;
    prefixes.set(m[1], entry);
  }
  const order = [...prefixes.keys()].sort(comparePrefixes);
  if (order.length !== shapes.units.length) {
    throw new DataFileError(inFile(file, `holds ${order.length} layers (${order.map((p) => `'${p}'`).join(', ')}), the model has ${shapes.units.length}`), { file });
  }
  let fanIn = shapes.inputs;
  return order.map((prefix, k) => {
    const names = prefixes.get(prefix) as { weight?: string; bias?: string };
    const units = shapes.units[k];
    if (names.weight === undefined) throw new DataFileError(inFile(file, `layer ${k} ('${prefix}') has no '${prefix}.weight'`), { file });
    if (names.bias === undefined) throw new DataFileError(inFile(file, `layer ${k} has no '${prefix}.bias' (Stepwell's dense layers always have a bias; save it as zeros)`), { file });
    const w = tensors.get(names.weight) as Tensor;
    const b = tensors.get(names.bias) as Tensor;
    if (w.shape.length !== 2 || w.shape[0] !== units || w.shape[1] !== fanIn) {
      throw new DataFileError(inFile(file, `layer ${k}: '${names.weight}' has shape ${shapeText(w.shape)}, the model's layer ${k} needs ${shapeText([units, fanIn])} (units × fan-in)`), { file, array: names.weight });
    }
    if (b.shape.length !== 1 || b.shape[0] !== units) {
      throw new DataFileError(inFile(file, `layer ${k}: '${names.bias}' has shape ${shapeText(b.shape)}, the model's layer ${k} needs ${shapeText([units])}`), { file, array: names.bias });
    }
    const check = (t: Tensor, name: string): void => {
      const bad = t.data.findIndex((v) => !Number.isFinite(v));
      if (bad >= 0) throw new DataFileError(inFile(file, `layer ${k}: '${name}' holds ${t.data[bad]} at flat index ${bad}; initial weights must be finite`), { file, array: name });
    };
    check(w, names.weight);
    check(b, names.bias);
    const weight = Array.from({ length: units }, (_, o) => Array.from(w.data.subarray(o * fanIn, (o + 1) * fanIn)));
    fanIn = units;
    return { weight, bias: Array.from(b.data) };
  });
}

/** Splits one flat vector in Stepwell's layout into layers. */
export function layersFromFlat(flat: Float64Array, shapes: LayerShapes, file: string): LayerWeights[] {
  let fanIn = shapes.inputs;
  let need = 0;
  const parts = shapes.units.map((u, k) => {
    need += u * fanIn + u;
    const text = `layer ${k}: ${u}×${fanIn} + ${u}`;
    fanIn = u;
    return text;
  });
  if (flat.length !== need) throw new DataFileError(inFile(file, `holds ${flat.length} values, the model has ${need} parameters (${parts.join('; ')})`), { file });
  const bad = flat.findIndex((v) => !Number.isFinite(v));
  if (bad >= 0) throw new DataFileError(inFile(file, `holds ${flat[bad]} at index ${bad}; initial weights must be finite`), { file });
  fanIn = shapes.inputs;
  let at = 0;
  return shapes.units.map((u) => {
    const weight = Array.from({ length: u }, (_, o) => Array.from(flat.subarray(at + o * fanIn, at + (o + 1) * fanIn)));
    at += u * fanIn;
    const bias = Array.from(flat.subarray(at, at + u));
    at += u;
    fanIn = u;
    return { weight, bias };
  });
}

/** Reads initial weights from a `.safetensors`, `.npz` or flat `.npy` file. */
export function readWeights(bytes: Uint8Array, file: string, shapes: LayerShapes, limits: DataLimits = DEFAULT_LIMITS): LayerWeights[] {
  const lower = file.toLowerCase();
  if (lower.endsWith('.safetensors')) return layersFromTensors(readSafetensors(bytes, file, limits), shapes, file);
  if (lower.endsWith('.npz')) {
    const arrays = readNpz(bytes, file, undefined, limits);
    return layersFromTensors(new Map([...arrays].map(([k, a]) => [k, { dtype: a.descr, shape: a.shape, data: a.data }])), shapes, file);
  }
  if (lower.endsWith('.npy')) {
    const a = readNpy(bytes, file, limits);
    if (a.shape.length !== 1) throw new DataFileError(inFile(file, `has shape [${a.shape.join(', ')}]; a .npy weights file holds one flat vector in Stepwell's layout (use .safetensors or .npz for named tensors)`), { file });
    return layersFromFlat(a.data, shapes, file);
  }
  throw new DataFileError(`${file}: initial weights are read from .safetensors, .npz or .npy files`, { file });
}
