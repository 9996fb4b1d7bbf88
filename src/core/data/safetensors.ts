/**
 * Reader and writer of the safetensors format (source: the format description of the
 * `safetensors` project, huggingface/safetensors README): an 8-byte little-endian unsigned header
 * size N, N bytes of UTF-8 JSON mapping each tensor name to {dtype, shape, data_offsets: [begin,
 * end]} (offsets into the byte buffer that follows; an optional "__metadata__" entry maps text
 * to text), then the buffer. Tensors are little-endian and C-ordered; the reader checks that the
 * offsets match dtype and shape, stay inside the file and do not overlap.
 */
import { DataFileError, inFile } from './errors';
import { halfToDouble } from './npy';
import { DEFAULT_LIMITS, type DataLimits } from './limits';

/** A tensor read as float64 (C order). */
export interface Tensor {
  dtype: string;
  shape: number[];
  data: Float64Array;
}

const WIDTH: Record<string, number> = { F64: 8, F32: 4, F16: 2, BF16: 2, I64: 8, I32: 4, I16: 2, I8: 1, U64: 8, U32: 4, U16: 2, U8: 1, BOOL: 1 };

function decode(view: DataView, at: number, dtype: string, file: string | undefined, name: string): number {
  switch (dtype) {
    case 'F64': return view.getFloat64(at, true);
    case 'F32': return view.getFloat32(at, true);
    case 'F16': return halfToDouble(view.getUint16(at, true));
    case 'BF16': {
      const scratch = new DataView(new ArrayBuffer(4));
      scratch.setUint32(0, view.getUint16(at, true) << 16, true);
      return scratch.getFloat32(0, true);
    }
    case 'I32': return view.getInt32(at, true);
    case 'I16': return view.getInt16(at, true);
    case 'I8': return view.getInt8(at);
    case 'U32': return view.getUint32(at, true);
    case 'U16': return view.getUint16(at, true);
    case 'U8': return view.getUint8(at);
    case 'BOOL': return view.getUint8(at) !== 0 ? 1 : 0;
    case 'I64':
    case 'U64': {
      const big = dtype === 'I64' ? view.getBigInt64(at, true) : view.getBigUint64(at, true);
      if (big > BigInt(Number.MAX_SAFE_INTEGER) || big < BigInt(-Number.MAX_SAFE_INTEGER)) throw new DataFileError(inFile(file, `tensor '${name}' holds the integer ${big.toString()}, beyond 2^53`), { file, array: name });
      return Number(big);
    }
    default:
      throw new DataFileError(inFile(file, `tensor '${name}' has dtype ${dtype}, which Stepwell does not read`), { file, array: name });
  }
}

const isObj = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);

/**
 * Decodes a safetensors file into named float64 tensors (in the order of their data offsets).
 * @throws DataFileError for anything malformed or over the limits
 */
export function readSafetensors(bytes: Uint8Array, file?: string, limits: DataLimits = DEFAULT_LIMITS): Map<string, Tensor> {
  if (bytes.length > limits.maxBytes) throw new DataFileError(inFile(file, `is ${bytes.length} bytes, above the limit of ${limits.maxBytes}`), { file });
  if (bytes.length < 8) throw new DataFileError(inFile(file, 'is too short to be a safetensors file (no 8-byte header size)'), { file });
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const n = view.getBigUint64(0, true);
  if (n > BigInt(bytes.length - 8)) throw new DataFileError(inFile(file, `declares a ${n.toString()}-byte header but holds ${bytes.length - 8} bytes after the size; it is not a safetensors file or is cut short`), { file });
  const headerEnd = 8 + Number(n);
  let header: unknown;
  try {
    header = JSON.parse(new TextDecoder('utf-8', { fatal: true }).decode(bytes.subarray(8, headerEnd)));
  } catch (e) {
    throw new DataFileError(inFile(file, `has a safetensors header that is not UTF-8 JSON: ${e instanceof Error ? e.message : String(e)}`), { file });
  }
  if (!isObj(header)) throw new DataFileError(inFile(file, 'has a safetensors header that is not a JSON object'), { file });
  const buffer = bytes.length - headerEnd;
  const entries: { name: string; dtype: string; shape: number[]; begin: number; end: number }[] = [];
  for (const [name, v] of Object.entries(header)) {
    if (name === '__metadata__') continue;
    const bad = (why: string): never => {
      throw new DataFileError(inFile(file, `tensor '${name}' ${why}`), { file, array: name });
    };
    if (!isObj(v)) bad('is not described by an object');
    const d = v as Record<string, unknown>;
    if (typeof d.dtype !== 'string' || !(d.dtype in WIDTH)) bad(`has dtype ${JSON.stringify(d.dtype)}; Stepwell reads ${Object.keys(WIDTH).join(', ')}`);
    if (!Array.isArray(d.shape) || !d.shape.every((s) => Number.isSafeInteger(s) && (s as number) >= 0)) bad('has a shape that is not a list of non-negative integers');
    const off = d.data_offsets;
    if (!Array.isArray(off) || off.length !== 2 || !off.every((o) => Number.isSafeInteger(o) && (o as number) >= 0)) bad('has data_offsets that are not two non-negative integers');
    const [begin, end] = off as [number, number];
    const shape = d.shape as number[];
    const count = shape.reduce((a, b) => a * b, 1);
    if (count > limits.maxValues) bad(`holds ${count} values, above the limit of ${limits.maxValues}`);
    if (end < begin || end > buffer) bad(`has data_offsets [${begin}, ${end}] outside the ${buffer}-byte buffer`);
    if (end - begin !== count * WIDTH[d.dtype as string]) bad(`has ${end - begin} bytes for shape [${shape.join(', ')}] of ${d.dtype as string}, which needs ${count * WIDTH[d.dtype as string]}`);
    entries.push({ name, dtype: d.dtype as string, shape, begin, end });
  }
  entries.sort((a, b) => a.begin - b.begin || a.end - b.end);
  for (let i = 1; i < entries.length; i++) {
    if (entries[i].begin < entries[i - 1].end) throw new DataFileError(inFile(file, `tensors '${entries[i - 1].name}' and '${entries[i].name}' overlap in the buffer`), { file });
  }
  const out = new Map<string, Tensor>();
  for (const e of entries) {
    const w = WIDTH[e.dtype];
    const data = new Float64Array((e.end - e.begin) / w);
    for (let k = 0; k < data.length; k++) data[k] = decode(view, headerEnd + e.begin + k * w, e.dtype, file, e.name);
    out.set(e.name, { dtype: e.dtype, shape: e.shape, data });
  }
  return out;
}

/**
 * Encodes named float64 tensors (C order) as a safetensors file, dtype F64, in the given order,
 * with optional text metadata. The header is padded with spaces to a multiple of 8 bytes.
 */
export function writeSafetensors(tensors: readonly { name: string; shape: readonly number[]; data: Float64Array }[], metadata?: Record<string, string>): Uint8Array {
  const header: Record<string, unknown> = {};
  if (metadata) header.__metadata__ = metadata;
  let offset = 0;
  for (const t of tensors) {
    const count = t.shape.reduce((a, b) => a * b, 1);
    if (count !== t.data.length) throw new RangeError(`writeSafetensors: '${t.name}' has shape [${t.shape.join(', ')}] but ${t.data.length} values`);
    header[t.name] = { dtype: 'F64', shape: [...t.shape], data_offsets: [offset, offset + 8 * count] };
    offset += 8 * count;
  }
  let json = JSON.stringify(header);
  json += ' '.repeat((8 - (new TextEncoder().encode(json).length % 8)) % 8);
  const head = new TextEncoder().encode(json);
  const out = new Uint8Array(8 + head.length + offset);
  const view = new DataView(out.buffer);
  view.setBigUint64(0, BigInt(head.length), true);
  out.set(head, 8);
  let at = 8 + head.length;
  for (const t of tensors) for (let k = 0; k < t.data.length; k++, at += 8) view.setFloat64(at, t.data[k], true);
  return out;
}
