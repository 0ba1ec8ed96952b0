/**
 * Errors that map to the contract's exit codes (interface.md §4):
 * 2 wrong usage, 3 invalid input, 4 data cannot support the analysis, 1 anything else.
 */
export class KdxError extends Error {
  constructor(message: string, readonly exitCode: number) {
    super(message);
    this.name = new.target.name;
  }
}

/** Exit code 2: the command line itself is wrong. */
export class UsageError extends KdxError {
  constructor(message: string) { super(message, 2); }
}

export interface InputLocation {
  file: string;
  /** 1-based line in the file (header included), when it applies */
  row?: number;
  /** 1-based column, when it applies */
  column?: number;
}

/** Exit code 3: an input file is missing or malformed. The message names file, row, column. */
export class InputError extends KdxError {
  constructor(readonly where: InputLocation, detail: string) {
    super(`${formatLocation(where)}: ${detail}`, 3);
  }
}

/** Exit code 4: the data are valid but cannot support the analysis asked for. */
export class DataError extends KdxError {
  constructor(message: string) { super(message, 4); }
}

export function formatLocation(w: InputLocation): string {
  let s = w.file;
  if (w.row !== undefined) s += `, row ${w.row}`;
  if (w.column !== undefined) s += `, column ${w.column}`;
  return s;
}
