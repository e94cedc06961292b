import { createHash } from 'node:crypto';
import { createReadStream, openSync, readSync, closeSync, statSync, readFileSync } from 'node:fs';
import { createInterface } from 'node:readline';
import { parse as parseCsv, CsvError } from 'csv-parse';
import { InputError } from '../../shared/formats/errors.js';
import {
  checkHeader,
  detectLayout,
  parseToaRecord,
  quoteTopLevelMjd,
  type ToaHeader,
  type ToaLayout,
  type ToaRow,
} from '../../shared/formats/toas.js';
import { ToaTable } from '../../shared/formats/toa-table.js';

export type RawRecord = string[] | Record<string, unknown>;
/** Called per row; may return a promise (the reader waits, so writers get back-pressure). */
export type RowHandler = (
  row: ToaRow,
  raw: RawRecord,
  header: ToaHeader,
  mjdWasNumber: boolean,
) => void | Promise<void>;

export interface ReadSummary {
  path: string;
  layout: ToaLayout;
  header: ToaHeader;
  rows: number;
  sha256: string;
  /** JSON layouts: the file wrote mjd as bare numbers */
  mjdWasNumber: boolean;
}

function firstChars(path: string): string {
  const fd = openSync(path, 'r');
  try {
    const buf = Buffer.alloc(256);
    const n = readSync(fd, buf, 0, 256, 0);
    return buf.subarray(0, n).toString('utf8');
  } finally {
    closeSync(fd);
  }
}

/**
 * Stream an arrival-time table, validating every row; `onRow` gets the parsed row and the raw
 * record (CSV: fields in header order; JSON: the object). Memory stays bounded for CSV and NDJSON.
 * `name` is what errors call the file and what picks the layout by extension (default `path`;
 * the server passes an upload's original name, its stored copy having none).
 */
export async function streamToas(
  path: string,
  onRow: RowHandler,
  name: string = path,
): Promise<ReadSummary> {
  const size = statSync(path).size;
  const start = firstChars(path);
  if (size === 0 || start.trim() === '') throw new InputError('the file is empty', { file: name });
  const layout = detectLayout(name, start);
  try {
    if (layout === 'json') return { ...(await readJsonArray(path, onRow)), path, layout };
    const hash = createHash('sha256');
    const stream = createReadStream(path);
    stream.on('data', (chunk) => hash.update(chunk));
    const r =
      layout === 'csv' ? await readCsv(path, stream, onRow) : await readNdjson(stream, onRow);
    return { ...r, path, layout, sha256: hash.digest('hex') };
  } catch (e) {
    if (e instanceof InputError) throw e.inFile(name);
    throw e;
  }
}

/**
 * CSV through csv-parse, consumed by 'data' events (no per-record promises). Line numbers are
 * not tracked per record, which would double the parse cost; an error's line is recovered by
 * re-reading the file up to the failing row.
 */
function readCsv(path: string, stream: NodeJS.ReadableStream, onRow: RowHandler) {
  return new Promise<{ header: ToaHeader; rows: number; mjdWasNumber: boolean }>(
    (resolve, reject) => {
      const parser = parseCsv({ bom: true, skip_empty_lines: true, trim: true });
      let header: ToaHeader | undefined;
      let rows = 0;
      let failed = false;
      const fail = (e: unknown) => {
        if (failed) return;
        failed = true;
        stream.unpipe(parser);
        parser.destroy();
        if (e instanceof CsvError) {
          const err = e as CsvError & { lines?: number; record?: unknown[] };
          const reason =
            err.code === 'CSV_RECORD_INCONSISTENT_FIELDS_LENGTH'
              ? `${err.record?.length ?? '?'} fields where the header has ${header?.columns.length ?? '?'}`
              : err.message.replace(/^Invalid Record Length: |^Invalid Opening Quote: /, '');
          reject(new InputError(reason, { row: rows + 1, line: err.lines }));
        } else if (
          e instanceof InputError &&
          e.location.row !== undefined &&
          e.location.line === undefined
        ) {
          lineOfRow(path, e.location.row).then(
            (line) => reject(new InputError(e.reason, { ...e.location, line })),
            () => reject(e),
          );
        } else reject(e);
      };
      parser.on('data', (record: string[]) => {
        if (failed) return;
        try {
          if (!header) {
            header = checkHeader(record);
            return;
          }
          rows++;
          const wait = onRow(parseToaRecord(record, header, rows), record, header, false);
          if (wait) {
            parser.pause();
            wait.then(() => parser.resume(), fail);
          }
        } catch (e) {
          fail(e);
        }
      });
      parser.on('error', fail);
      parser.on('end', () => {
        if (failed) return;
        if (!header) fail(new InputError('the file has no header line'));
        else if (rows === 0) fail(new InputError('the file has a header but no data rows'));
        else resolve({ header, rows, mjdWasNumber: false });
      });
      stream.on('error', fail);
      stream.pipe(parser);
    },
  );
}

/** The file line on which data row `row` ends (header is row 0), for error messages. */
async function lineOfRow(path: string, row: number): Promise<number | undefined> {
  const parser = createReadStream(path).pipe(
    parseCsv({ bom: true, skip_empty_lines: true, info: true, relax_column_count: true }),
  );
  let n = -1;
  for await (const { info } of parser as AsyncIterable<{ info: { lines: number } }>) {
    if (++n === row) {
      parser.destroy();
      return info.lines;
    }
  }
  return undefined;
}

function checkObject(v: unknown, row: number, line?: number): Record<string, unknown> {
  if (v === null || typeof v !== 'object' || Array.isArray(v)) {
    throw new InputError('each entry must be an object of column names to values', { row, line });
  }
  return v as Record<string, unknown>;
}

async function readNdjson(stream: NodeJS.ReadableStream, onRow: RowHandler) {
  const lines = createInterface({ input: stream, crlfDelay: Infinity });
  let header: ToaHeader | undefined;
  let rows = 0;
  let lineNo = 0;
  let mjdWasNumber = false;
  for await (const text of lines) {
    lineNo++;
    if (text.trim() === '') continue;
    rows++;
    const { text: quoted, numberRows } = quoteTopLevelMjd(
      lineNo === 1 ? text.replace(/^\uFEFF/, '') : text,
      1,
    );
    const rowNumber = numberRows[0] === true;
    if (rowNumber) mjdWasNumber = true;
    let value: unknown;
    try {
      value = JSON.parse(quoted);
    } catch (e) {
      throw new InputError(`not valid JSON (${(e as Error).message})`, { row: rows, line: lineNo });
    }
    const obj = checkObject(value, rows, lineNo);
    header ??= checkHeader(Object.keys(obj));
    await onRow(
      parseToaRecord(obj as Record<string, string>, header, rows, lineNo),
      obj,
      header,
      rowNumber,
    );
  }
  if (!header) throw new InputError('the file has no data rows');
  return { header, rows, mjdWasNumber };
}

async function readJsonArray(path: string, onRow: RowHandler) {
  const buf = readFileSync(path);
  const sha256 = createHash('sha256').update(buf).digest('hex');
  const text = buf.toString('utf8').replace(/^\uFEFF/, '');
  const { text: quoted, numberRows } = quoteTopLevelMjd(text, 2);
  let value: unknown;
  try {
    value = JSON.parse(quoted);
  } catch (e) {
    throw new InputError(`not valid JSON (${(e as Error).message})`);
  }
  if (!Array.isArray(value))
    throw new InputError('a JSON arrival-time file must hold an array of objects');
  if (value.length === 0) throw new InputError('the array holds no rows');
  const header = checkHeader(Object.keys(checkObject(value[0], 1)));
  const mjdWasNumber = numberRows.some(Boolean);
  for (let i = 0; i < value.length; i++) {
    const obj = checkObject(value[i], i + 1);
    await onRow(
      parseToaRecord(obj as Record<string, string>, header, i + 1),
      obj,
      header,
      numberRows[i] === true,
    );
  }
  return { header, rows: value.length, sha256, mjdWasNumber };
}

/** Read a whole table into columns (dm fit, dm series); `name` as for `streamToas`. */
export async function readToaTable(
  path: string,
  name: string = path,
): Promise<{ table: ToaTable; summary: ReadSummary }> {
  let table: ToaTable | undefined;
  // rows of arrival-time tables take 30–60 bytes: size the columns once, generously
  const expectedRows = Math.max(1024, statSync(path).size / 26);
  const summary = await streamToas(
    path,
    (row, _raw, header) => {
      table ??= new ToaTable(header, expectedRows);
      table.push(row);
    },
    name,
  );
  return { table: table!, summary };
}
