/**
 * Content hashes of data: SHA-256 (FIPS 180-4, `@noble/hashes`) of a file's bytes, and the
 * data hash of the numbers a session actually uses — the ledger's `dataHash`.
 *
 * Data hash: SHA-256 over, in order, the tag "stepwell-data-1", rows, inputs, targets, x and y
 * (each array as its length then its little-endian float64 bytes), then for a held-out split its
 * rows, x and y, then the class labels (count, then each label as UTF-16 text). Numbers that are
 * equal give equal hashes whatever file format or column order they came from.
 */
import { sha256 } from '@noble/hashes/sha256';
import { bytesToHex } from '@noble/hashes/utils';
import { Fingerprinter } from '../fingerprint';
import type { DataSetup } from '../setup';

/** SHA-256 hex of raw bytes. */
export function sha256Hex(bytes: Uint8Array): string {
  return bytesToHex(sha256(bytes));
}

/** The data hash (module comment) of a data set and its class labels. */
export function dataHash(data: Pick<DataSetup, 'rows' | 'inputs' | 'targets' | 'x' | 'y' | 'heldOut'>, classes?: readonly string[]): string {
  const f = new Fingerprinter().text('stepwell-data-1').number(data.rows).number(data.inputs).number(data.targets).array(data.x).array(data.y);
  if (data.heldOut) f.number(data.heldOut.rows).array(data.heldOut.x).array(data.heldOut.y);
  else f.number(-1);
  f.number(classes?.length ?? 0);
  for (const c of classes ?? []) f.text(c);
  return f.hex();
}
