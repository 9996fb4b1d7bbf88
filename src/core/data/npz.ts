/**
 * Reader of NumPy's `.npz` archives (`numpy.savez` / `savez_compressed`): a ZIP file whose
 * members `NAME.npy` are `.npy` files (source: numpy/lib/npyio.py). Unzipped with fflate; the
 * sizes the archive declares are checked against the limits before any member is inflated, and
 * each inflated member must have the size it declared.
 */
import { unzipSync, type UnzipFileInfo } from 'fflate';
import { DataFileError, inFile } from './errors';
import { DEFAULT_LIMITS, type DataLimits } from './limits';
import { readNpy, type NumericArray } from './npy';

/**
 * Decodes every array of a `.npz` archive (or only those in `only`), keyed by name without `.npy`.
 * @throws DataFileError for a malformed archive, a member over the limits or a bad member
 */
export function readNpz(bytes: Uint8Array, file?: string, only?: readonly string[], limits: DataLimits = DEFAULT_LIMITS): Map<string, NumericArray> {
  if (bytes.length > limits.maxBytes) throw new DataFileError(inFile(file, `is ${bytes.length} bytes, above the limit of ${limits.maxBytes}`), { file });
  if (bytes.length < 4 || bytes[0] !== 0x50 || bytes[1] !== 0x4b) throw new DataFileError(inFile(file, 'is not a .npz archive (it does not start with a ZIP signature)'), { file });
  const declared = new Map<string, number>();
  let tooBig: string | undefined;
  let members: Record<string, Uint8Array>;
  try {
    members = unzipSync(bytes, {
      filter: (info: UnzipFileInfo) => {
        if (!info.name.endsWith('.npy')) return false;
        const name = info.name.slice(0, -4);
        if (only !== undefined && !only.includes(name)) return false;
        if (info.originalSize > limits.maxBytes && tooBig === undefined) tooBig = `${info.name} (${info.originalSize} bytes)`;
        declared.set(info.name, info.originalSize);
        return info.originalSize <= limits.maxBytes;
      },
    });
  } catch (e) {
    throw new DataFileError(inFile(file, `is not a readable .npz archive: ${e instanceof Error ? e.message : String(e)}`), { file });
  }
  if (tooBig !== undefined) throw new DataFileError(inFile(file, `member ${tooBig} is above the limit of ${limits.maxBytes} bytes`), { file });
  const out = new Map<string, NumericArray>();
  for (const [member, data] of Object.entries(members)) {
    const name = member.slice(0, -4);
    if (declared.get(member) !== data.length) throw new DataFileError(inFile(file, `member ${member} inflates to ${data.length} bytes but declares ${declared.get(member)}`), { file, array: name });
    out.set(name, readNpy(data, file === undefined ? member : `${file}[${name}]`, limits));
  }
  return out;
}
