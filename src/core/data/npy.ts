/**
 * Reader and writer of NumPy's `.npy` format (format versions 1.0, 2.0 and 3.0; source: NumPy
 * NEP 1, "A simple file format for NumPy arrays", and numpy/lib/format.py): magic `\x93NUMPY`,
 * version bytes, a little-endian header length (2 bytes in 1.0, 4 in 2.0/3.0), an ASCII (3.0:
 * UTF-8) Python-literal dict {'descr', 'fortran_order', 'shape'}, then the raw data.
 *
 * Every numeric dtype is read — bool, signed and unsigned integers of 1–8 bytes, float16/32/64 —
 * in either byte order, C or Fortran order, and returned as float64 in C (row-major) order.
 * Integers beyond 2⁵³ in magnitude are refused rather than rounded. Object, string, complex,
 * datetime and structured dtypes are refused with their descr.
 */
import { DataFileError, inFile } from './errors';
import { DEFAULT_LIMITS, type DataLimits } from './limits';
import { powInt } from '../optim/powers';

/** A decoded array: float64 values in C order and the shape. */
export interface NumericArray {
  shape: number[];
  data: Float64Array;
  /** The dtype descr as written in the file, e.g. `<f8`, `>i4`, `|u1`. */
  descr: string;
}

const MAGIC = [0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59]; // \x93NUMPY

interface Header {
  descr: string;
  fortran: boolean;
  shape: number[];
}

/** Parses the header dict, a Python literal of a fixed, simple form. */
function parseHeader(text: string, file: string | undefined): Header {
  const fail = (why: string): never => {
    throw new DataFileError(inFile(file, `the .npy header ${why}: ${JSON.stringify(text.slice(0, 120))}`), { file });
  };
  const descr = /['"]descr['"]\s*:\s*['"]([^'"]*)['"]/.exec(text);
  const fortran = /['"]fortran_order['"]\s*:\s*(True|False)/.exec(text);
  const shape = /['"]shape['"]\s*:\s*\(([^)]*)\)/.exec(text);
  if (!text.trimStart().startsWith('{')) fail('is not a dict');
  if (!descr) fail("has no 'descr' (or it is not a simple dtype string; structured arrays are not supported)");
  if (!fortran) fail("has no 'fortran_order'");
  if (!shape) fail("has no 'shape'");
  const dims = (shape as RegExpExecArray)[1].split(',').map((s) => s.trim()).filter((s) => s !== '');
  const out: number[] = [];
  for (const d of dims) {
    if (!/^\d{1,15}L?$/.test(d)) fail(`has a shape entry ${JSON.stringify(d)} that is not a non-negative integer`);
    out.push(Number(d.replace('L', '')));
  }
  return { descr: (descr as RegExpExecArray)[1], fortran: (fortran as RegExpExecArray)[1] === 'True', shape: out };
}

type Kind = 'b' | 'i' | 'u' | 'f';

/** Byte order, kind and width of a numeric descr, or a typed error naming it. */
function dtype(descr: string, file: string | undefined): { little: boolean; kind: Kind; size: number } {
  const m = /^([<>|=]?)([biuf])(\d+)$/.exec(descr);
  const ok = m !== null && ((m[2] === 'b' && m[3] === '1') || (m[2] === 'f' && ['2', '4', '8'].includes(m[3])) || ((m[2] === 'i' || m[2] === 'u') && ['1', '2', '4', '8'].includes(m[3])));
  if (!ok) throw new DataFileError(inFile(file, `dtype '${descr}' is not a numeric dtype Stepwell reads (bool, int8…int64, uint8…uint64, float16, float32, float64)`), { file });
  const order = (m as RegExpExecArray)[1];
  // '=' is native order; NumPy writes '<' or '>' for multi-byte types, so '=' only appears in hand-made files: take little-endian
  return { little: order !== '>', kind: (m as RegExpExecArray)[2] as Kind, size: Number((m as RegExpExecArray)[3]) };
}

/** 2ᵏ for an integer k, exactly (by multiplications, not `**`, whose rounding is the engine's). */
const pow2 = (k: number): number => (k >= 0 ? powInt(2, k) : 1 / powInt(2, -k));

/** IEEE 754 half precision to double (exact). */
export function halfToDouble(h: number): number {
  const sign = h & 0x8000 ? -1 : 1;
  const exp = (h >> 10) & 0x1f;
  const frac = h & 0x3ff;
  if (exp === 0) return sign * frac * pow2(-24);
  if (exp === 31) return frac === 0 ? sign * Infinity : NaN;
  return sign * (1 + frac / 1024) * pow2(exp - 15);
}

/** Reads one element at byte offset `at`. */
function element(view: DataView, at: number, kind: Kind, size: number, little: boolean, file: string | undefined): number {
  switch (kind) {
    case 'b':
      return view.getUint8(at) !== 0 ? 1 : 0;
    case 'f':
      return size === 8 ? view.getFloat64(at, little) : size === 4 ? view.getFloat32(at, little) : halfToDouble(view.getUint16(at, little));
    case 'i':
    case 'u': {
      if (size === 1) return kind === 'i' ? view.getInt8(at) : view.getUint8(at);
      if (size === 2) return kind === 'i' ? view.getInt16(at, little) : view.getUint16(at, little);
      if (size === 4) return kind === 'i' ? view.getInt32(at, little) : view.getUint32(at, little);
      const big = kind === 'i' ? view.getBigInt64(at, little) : view.getBigUint64(at, little);
      if (big > BigInt(Number.MAX_SAFE_INTEGER) || big < BigInt(-Number.MAX_SAFE_INTEGER)) {
        throw new DataFileError(inFile(file, `holds the integer ${big.toString()}, beyond 2^53, which float64 cannot hold exactly`), { file });
      }
      return Number(big);
    }
  }
}

/**
 * Decodes a `.npy` file.
 * @param bytes the whole file
 * @param file name for messages
 * @returns float64 values in C order with the shape
 * @throws DataFileError for anything malformed, unsupported or over the limits
 */
export function readNpy(bytes: Uint8Array, file?: string, limits: DataLimits = DEFAULT_LIMITS): NumericArray {
  if (bytes.length > limits.maxBytes) throw new DataFileError(inFile(file, `is ${bytes.length} bytes, above the limit of ${limits.maxBytes}`), { file });
  if (bytes.length < 10 || MAGIC.some((b, i) => bytes[i] !== b)) throw new DataFileError(inFile(file, 'is not a .npy file (it does not start with \\x93NUMPY)'), { file });
  const major = bytes[6];
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  let headerLength: number;
  let start: number;
  if (major === 1) {
    headerLength = view.getUint16(8, true);
    start = 10;
  } else if (major === 2 || major === 3) {
    if (bytes.length < 12) throw new DataFileError(inFile(file, 'ends inside its .npy header'), { file });
    headerLength = view.getUint32(8, true);
    start = 12;
  } else {
    throw new DataFileError(inFile(file, `uses .npy format version ${major}.${bytes[7]}; Stepwell reads versions 1, 2 and 3`), { file });
  }
  if (start + headerLength > bytes.length) throw new DataFileError(inFile(file, 'ends inside its .npy header'), { file });
  let text: string;
  try {
    text = new TextDecoder(major === 3 ? 'utf-8' : 'latin1', { fatal: true }).decode(bytes.subarray(start, start + headerLength));
  } catch {
    throw new DataFileError(inFile(file, 'has a .npy header that is not valid text'), { file });
  }
  const header = parseHeader(text, file);
  const { little, kind, size } = dtype(header.descr, file);
  let count = 1;
  for (const d of header.shape) count *= d;
  if (header.shape.length > 2) throw new DataFileError(inFile(file, `has ${header.shape.length} dimensions (shape [${header.shape.join(', ')}]); Stepwell reads vectors and matrices`), { file });
  if (header.shape[1] !== undefined && header.shape[1] > limits.maxColumns) throw new DataFileError(inFile(file, `has ${header.shape[1]} columns, above the limit of ${limits.maxColumns}`), { file });
  if (count > limits.maxValues) throw new DataFileError(inFile(file, `holds ${count} values (shape [${header.shape.join(', ')}]), above the limit of ${limits.maxValues}`), { file });
  const dataStart = start + headerLength;
  if (dataStart + count * size !== bytes.length) {
    throw new DataFileError(inFile(file, `should hold ${count * size} bytes of data for shape [${header.shape.join(', ')}] and dtype '${header.descr}', but holds ${bytes.length - dataStart}`), { file });
  }
  const out = new Float64Array(count);
  const rows = header.shape.length === 2 ? header.shape[0] : count;
  const cols = header.shape.length === 2 ? header.shape[1] : 1;
  for (let k = 0; k < count; k++) {
    // Fortran order stores column by column: element k is (k mod rows, ⌊k / rows⌋)
    const target = header.fortran && header.shape.length === 2 ? (k % rows) * cols + Math.floor(k / rows) : k;
    out[target] = element(view, dataStart + k * size, kind, size, little, file);
  }
  return { shape: header.shape, data: out, descr: header.descr };
}

/**
 * Encodes float64 values (C order) as a version 1.0 `.npy` file, dtype `<f8` (what
 * `numpy.save` writes for a float64 array). The header is padded to a multiple of 64 bytes.
 */
export function writeNpy(data: Float64Array, shape: readonly number[]): Uint8Array {
  const count = shape.reduce((a, b) => a * b, 1);
  if (count !== data.length) throw new RangeError(`writeNpy: shape [${shape.join(', ')}] holds ${count} values, the data has ${data.length}`);
  const dims = shape.length === 1 ? `(${shape[0]},)` : `(${shape.join(', ')})`;
  let dict = `{'descr': '<f8', 'fortran_order': False, 'shape': ${dims}, }`;
  const total = 10 + dict.length + 1;
  dict += ' '.repeat((64 - (total % 64)) % 64) + '\n';
  const out = new Uint8Array(10 + dict.length + data.length * 8);
  out.set(MAGIC, 0);
  out[6] = 1;
  out[7] = 0;
  const view = new DataView(out.buffer);
  view.setUint16(8, dict.length, true);
  for (let i = 0; i < dict.length; i++) out[10 + i] = dict.charCodeAt(i);
  const base = 10 + dict.length;
  for (let i = 0; i < data.length; i++) view.setFloat64(base + 8 * i, data[i], true);
  return out;
}
