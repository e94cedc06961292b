/** Where in an input file something is wrong. Rows count data rows from 1 (header excluded). */
export interface InputLocation {
  file?: string;
  row?: number;
  line?: number;
  column?: string;
}

/** Bad input: carries the file, row, line and column so the edge can print one clear line. */
export class InputError extends Error {
  readonly location: InputLocation;
  readonly reason: string;

  constructor(reason: string, location: InputLocation = {}) {
    super(formatLocation(location) + reason);
    this.name = 'InputError';
    this.reason = reason;
    this.location = location;
  }

  /** The same error with the file name filled in. */
  inFile(file: string): InputError {
    return new InputError(this.reason, { ...this.location, file });
  }
}

function formatLocation(loc: InputLocation): string {
  const parts: string[] = [];
  if (loc.file) parts.push(loc.file);
  const where: string[] = [];
  if (loc.row !== undefined) where.push(`row ${loc.row}`);
  if (loc.line !== undefined) where.push(`line ${loc.line}`);
  if (where.length) parts.push(where.join(', '));
  if (loc.column !== undefined) parts.push(`column "${loc.column}"`);
  return parts.length ? parts.join(': ') + ': ' : '';
}
