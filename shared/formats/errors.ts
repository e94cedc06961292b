/** Where in an input file something is wrong. Rows count data rows from 1 (header excluded). */
export interface InputLocation {
  file?: string;
  row?: number;
  line?: number;
  column?: string;
}

/** The longest reason an InputError keeps: an error names the problem, it never echoes the input. */
export const MAX_REASON = 400;
/** Column names (which come from the file) are quoted up to this many characters. */
const MAX_COLUMN = 60;

/** Bad input: carries the file, row, line and column so the edge can print one clear line. */
export class InputError extends Error {
  readonly location: InputLocation;
  readonly reason: string;

  constructor(reason: string, location: InputLocation = {}) {
    const r = boundReason(reason);
    super(formatLocation(location) + r);
    this.name = 'InputError';
    this.reason = r;
    this.location = location;
  }

  /** The same error with the file name filled in. */
  inFile(file: string): InputError {
    return new InputError(this.reason, { ...this.location, file });
  }
}

function formatLocation(loc: InputLocation): string {
  const parts: string[] = [];
  if (loc.file) parts.push(oneLine(loc.file));
  const where: string[] = [];
  if (loc.row !== undefined) where.push(`row ${loc.row}`);
  if (loc.line !== undefined) where.push(`line ${loc.line}`);
  if (where.length) parts.push(where.join(', '));
  if (loc.column !== undefined) parts.push(`column ${quoteInput(loc.column, MAX_COLUMN)}`);
  return parts.length ? parts.join(': ') + ': ' : '';
}

// C0 and C1 controls, DEL and the Unicode line and paragraph separators: nothing that can break
// the one-line message or drive a terminal reaches stderr
// eslint-disable-next-line no-control-regex
const CONTROL = /[\u0000-\u001f\u007f-\u009f\u2028\u2029]/g;

function escapeControl(c: string): string {
  const named: Record<string, string> = { '\n': '\\n', '\r': '\\r', '\t': '\\t' };
  return named[c] ?? `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`;
}

/** Text on one line with control characters escaped (\n, \u001b). */
export function oneLine(text: string): string {
  return text.replace(CONTROL, escapeControl);
}

/** At most `max` characters, cut on a code-point boundary, with an ellipsis and the length. */
function cut(text: string, max: number): string {
  if (text.length <= max) return text;
  let end = max;
  const c = text.charCodeAt(end - 1);
  if (c >= 0xd800 && c <= 0xdbff) end--; // do not split a surrogate pair
  return `${text.slice(0, end)}…`;
}

/**
 * A piece of input text for an error message: in double quotes, at most `max` characters (then
 * an ellipsis and the full length), control characters escaped, so a message stays one short line
 * however long or odd the input is.
 */
export function quoteInput(text: string, max = 40, quote: '"' | "'" = '"'): string {
  const q = `${quote}${oneLine(cut(text, max))}${quote}`;
  return text.length > max ? `${q} (${text.length} characters)` : q;
}

/** A reason on one line and at most MAX_REASON characters (the last line of defence). */
function boundReason(reason: string): string {
  const r = oneLine(reason);
  return r.length > MAX_REASON ? cut(r, MAX_REASON) : r;
}
