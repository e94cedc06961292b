import { InputError, quoteInput } from './errors.js';
import { parseDecimal } from './numbers.js';
import { EpochSyntaxError, parseMjd, type Epoch } from '../time/mjd.js';

/**
 * Arrival-time tables (interfaces.md "Arrival-time table"): CSV with header, JSON array or
 * NDJSON of objects with the same keys. Column order is free; unknown columns are kept.
 */
export const REQUIRED_COLUMNS = ['source', 'mjd', 'freq_mhz', 'err_us'] as const;
export const OPTIONAL_COLUMNS = [
  'residual_us',
  'receiver',
  'period_s',
  'pulse',
  'dm',
  'dm_err',
] as const;

export type ToaLayout = 'csv' | 'json' | 'ndjson';

/** One validated row. `raw` holds the fields exactly as read, for writing back. */
export interface ToaRow {
  row: number;
  source: string;
  mjdText: string;
  epoch: Epoch;
  freqMhz: number;
  errUs: number;
  residualUs?: number;
  receiver?: string;
  periodS?: number;
  /** pulse number: arrival times with known pulse numbers are not folded by the period */
  pulse?: number;
  /** wideband arrival times: the DM measured with this arrival time, and its 1σ error */
  dm?: number;
  dmErr?: number;
}

export interface ToaHeader {
  columns: string[];
  /** position of each column, for records read as arrays (CSV) */
  index: Record<string, number>;
  hasResidual: boolean;
  hasReceiver: boolean;
  hasPeriod: boolean;
  hasPulse: boolean;
  /** `dm` and `dm_err` columns: wideband arrival times, each with its own DM */
  hasDm: boolean;
}

/**
 * The most columns a table may have: the ten Sightline reads and plenty of room for columns it
 * keeps as they are. A header of 10⁶ names is refused before it is indexed (seconds of work).
 */
export const MAX_COLUMNS = 1024;

/** Check a header: required columns present, no duplicates, and a hint for a wrong delimiter. */
export function checkHeader(columns: string[]): ToaHeader {
  if (columns.length > MAX_COLUMNS) {
    throw new InputError(
      `the header has ${columns.length} columns; an arrival-time table may have at most ${MAX_COLUMNS}`,
      { line: 1 },
    );
  }
  const seen = new Set<string>();
  columns.forEach((c, i) => {
    if (seen.has(c)) {
      throw new InputError(
        `the header names column ${quoteInput(c)} twice (columns ${columns.indexOf(c) + 1} and ${i + 1})`,
        { line: 1, column: c },
      );
    }
    seen.add(c);
  });
  if (columns.length === 1) {
    const only = columns[0];
    for (const [sep, name] of [
      [';', 'semicolon'],
      ['\t', 'tab'],
      ['|', 'pipe'],
    ] as const) {
      if (only.includes(sep)) {
        throw new InputError(
          `the header is one field containing ${name}s (${quoteInput(only, 60)}): arrival-time CSV files must be comma-separated`,
          { line: 1 },
        );
      }
    }
  }
  if (seen.has('dm') !== seen.has('dm_err')) {
    const [has, lacks] = seen.has('dm') ? ['dm', 'dm_err'] : ['dm_err', 'dm'];
    throw new InputError(
      `the header has "${has}" but not "${lacks}": wideband arrival times need both a DM and its error`,
      { line: 1, column: has },
    );
  }
  const missing = REQUIRED_COLUMNS.filter((c) => !seen.has(c));
  if (missing.length) {
    throw new InputError(
      `missing required column${missing.length > 1 ? 's' : ''} ${missing.map((m) => `"${m}"`).join(', ')} (required: ${REQUIRED_COLUMNS.join(', ')})`,
      { line: 1, column: missing[0] },
    );
  }
  return {
    columns,
    index: Object.fromEntries(columns.map((c, i) => [c, i])),
    hasResidual: seen.has('residual_us'),
    hasReceiver: seen.has('receiver'),
    hasPeriod: seen.has('period_s'),
    hasPulse: seen.has('pulse'),
    hasDm: seen.has('dm'),
  };
}

type Field = unknown;

/** A JSON value as a message names it (never its whole text: it may be huge or deeply nested). */
function describeValue(v: unknown): string {
  if (Array.isArray(v)) return `an array of ${v.length}`;
  if (typeof v === 'object') return 'an object';
  if (typeof v === 'number') return String(v);
  return typeof v === 'boolean' ? String(v) : typeof v;
}

/**
 * A field's text: CSV fields are strings; JSON values may be strings or finite numbers (whose
 * decimal text is used); null or missing is empty. Anything else — arrays (`["60000.1"]`),
 * objects, booleans — is refused naming the row and column rather than turned into text.
 */
function text(v: Field, where: () => { row: number; line?: number; column: string }): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'string') return v;
  if (typeof v === 'number' && Number.isFinite(v)) return String(v);
  throw new InputError(`expected text or a number, found ${describeValue(v)}`, where());
}

/**
 * Validate one record: fields in header order (CSV) or keyed by column (JSON). `row` counts
 * data rows from 1; `line` is the line of the file when known. Throws InputError naming row,
 * line and column.
 */
export function parseToaRecord(
  rec: Record<string, Field> | Field[],
  header: ToaHeader,
  row: number,
  line?: number,
): ToaRow {
  const at = (column: string) => ({ row, line, column });
  const get = Array.isArray(rec)
    ? (column: string) => rec[header.index[column]]
    : (column: string) => rec[column];
  const required = (column: string): string => {
    const v = text(get(column), () => at(column)).trim();
    if (v === '') throw new InputError('empty value', at(column));
    return v;
  };
  const number = (column: string, check: (v: number) => string | undefined): number => {
    const raw = required(column);
    const v = parseDecimal(raw);
    if (v === undefined) {
      throw new InputError(`${quoteInput(raw)} is not a finite number`, at(column));
    }
    const problem = check(v);
    // number text (digits, sign, point, exponent) needs no quotes, only shortening
    if (problem)
      throw new InputError(
        `${raw.length > 40 ? `${raw.slice(0, 40)}…` : raw} ${problem}`,
        at(column),
      );
    return v;
  };

  const source = required('source');
  const mjdField = get('mjd');
  if (source === 'source' && typeof mjdField === 'string' && mjdField.trim() === 'mjd') {
    throw new InputError('this row repeats the header (were two files joined?)', { row, line });
  }
  const mjdText = required('mjd');
  let epoch: Epoch;
  try {
    epoch = parseMjd(mjdText);
  } catch (e) {
    if (e instanceof EpochSyntaxError) throw new InputError(e.message, at('mjd'));
    throw e;
  }
  const freqMhz = number('freq_mhz', (v) => (v > 0 ? undefined : 'is not a positive frequency'));
  const errUs = number('err_us', (v) => (v > 0 ? undefined : 'is not a positive uncertainty'));
  const out: ToaRow = { row, source, mjdText, epoch, freqMhz, errUs };
  if (header.hasResidual) out.residualUs = number('residual_us', () => undefined);
  if (header.hasReceiver) out.receiver = required('receiver');
  if (header.hasPeriod) {
    out.periodS = number('period_s', (v) => (v > 0 ? undefined : 'is not a positive period'));
  }
  if (header.hasPulse) {
    out.pulse = number('pulse', (v) =>
      Number.isSafeInteger(v) ? undefined : 'is not a whole pulse number',
    );
  }
  if (header.hasDm) {
    out.dm = number('dm', () => undefined);
    out.dmErr = number('dm_err', (v) => (v > 0 ? undefined : 'is not a positive uncertainty'));
  }
  return out;
}

/** Guess the layout from the file name, then from the first non-blank character. */
export function detectLayout(fileName: string, firstChars: string): ToaLayout {
  const lower = fileName.toLowerCase();
  if (lower.endsWith('.csv')) return 'csv';
  if (lower.endsWith('.ndjson') || lower.endsWith('.jsonl')) return 'ndjson';
  if (lower.endsWith('.json')) return firstChars.trimStart().startsWith('{') ? 'ndjson' : 'json';
  const c = firstChars.trimStart()[0];
  if (c === '[') return 'json';
  if (c === '{') return 'ndjson';
  return 'csv';
}

const NUMBER_AT = /-?\d+(?:\.\d+)?(?:[eE][+-]?\d+)?/y;

/**
 * JSON numbers lose digits in JSON.parse, so bare `"mjd": 60000.123…` values are quoted first
 * and their decimal text survives. Only the `mjd` keys of the row objects themselves are
 * touched (objects at `objectDepth`: 1 for an NDJSON line or a single object, 2 for the
 * objects of a JSON array); nested unknown columns stay exactly as written. `numberRows[k]`
 * says whether row object k wrote its mjd as a bare number, so it can be written back alike.
 */
export function quoteTopLevelMjd(
  json: string,
  objectDepth = 1,
): { text: string; numberRows: boolean[] } {
  const numberRows: boolean[] = [];
  let out = '';
  let last = 0;
  let depth = 0;
  for (let i = 0; i < json.length; i++) {
    const c = json[i];
    if (c === '{' || c === '[') {
      depth++;
      if (c === '{' && depth === objectDepth) numberRows.push(false);
    } else if (c === '}' || c === ']') {
      depth--;
    } else if (c === '"') {
      let j = i + 1;
      while (j < json.length && json[j] !== '"') j += json[j] === '\\' ? 2 : 1;
      const isMjdKey = depth === objectDepth && j - i === 4 && json.startsWith('mjd', i + 1);
      i = j;
      if (!isMjdKey) continue;
      let k = j + 1;
      while (k < json.length && /\s/.test(json[k])) k++;
      if (json[k] !== ':') continue;
      k++;
      while (k < json.length && /\s/.test(json[k])) k++;
      NUMBER_AT.lastIndex = k;
      const m = NUMBER_AT.exec(json);
      if (!m) continue;
      out += json.slice(last, k) + '"' + m[0] + '"';
      last = k + m[0].length;
      i = last - 1;
      if (numberRows.length) numberRows[numberRows.length - 1] = true;
    }
  }
  return { text: out + json.slice(last), numberRows };
}

/** quoteTopLevelMjd for a single object's text (the profile layouts). */
export function quoteMjdNumbers(json: string): string {
  return quoteTopLevelMjd(json, 1).text;
}
