/**
 * The one error type the data readers throw: every malformed, oversized or unsupported input
 * ends as a {@link DataFileError} naming what is wrong and where (file, row, column, array),
 * so callers can report it at the spec key that named the file. Anything else escaping a reader
 * is a bug (the fuzz tests in test/unit/data check that).
 */

/** Where in a file a problem sits (all optional; rows and columns are 1-based as a person counts). */
export interface DataPlace {
  file?: string;
  row?: number;
  column?: string;
  array?: string;
}

/** A problem with a data or weights file, with a complete message. */
export class DataFileError extends Error {
  constructor(message: string, readonly place: DataPlace = {}) {
    super(message);
    this.name = 'DataFileError';
  }
}

/** Prefixes `message` with the file name when one is known: "sensors.csv: …". */
export function inFile(file: string | undefined, message: string): string {
  return file === undefined ? message : `${file}: ${message}`;
}
