import { createHash } from 'node:crypto';
import { createReadStream, openSync, readSync, closeSync, statSync, readFileSync } from 'node:fs';
import { createInterface } from 'node:readline';
import { isAscii } from 'node:buffer';
import { Readable } from 'node:stream';
import { parse as parseCsv, CsvError } from 'csv-parse';
import { InputError } from '../../shared/formats/errors.js';
import { jsonSyntaxError } from '../../shared/formats/json.js';
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

function readAt(path: string, position: number, length: number): string {
  const fd = openSync(path, 'r');
  try {
    const buf = Buffer.alloc(length);
    const n = readSync(fd, buf, 0, length, position);
    return buf.subarray(0, n).toString('utf8');
  } finally {
    closeSync(fd);
  }
}

/** The layout `streamToas` reads a file as (by its name, then its first characters). */
export function toaLayout(path: string, name: string = path): ToaLayout {
  return detectLayout(name, readAt(path, 0, 256));
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
  const start = readAt(path, 0, 256);
  if (size === 0 || start.trim() === '') throw new InputError('the file is empty', { file: name });
  const layout = detectLayout(name, start);
  try {
    if (layout === 'json') return { ...(await readJsonArray(path, onRow)), path, layout };
    if (layout === 'csv') return { ...(await readCsv(path, onRow)), path, layout };
    const hash = createHash('sha256');
    const stream = createReadStream(path);
    stream.on('data', (chunk) => hash.update(chunk));
    const r = await readNdjson(stream, onRow);
    return { ...r, path, layout, sha256: hash.digest('hex') };
  } catch (e) {
    if (e instanceof InputError) throw e.inFile(name);
    throw e;
  }
}

/** csv-parse options of every CSV read (records, and the line of a row for error messages). */
const CSV_OPTIONS = {
  bom: true,
  skip_empty_lines: true,
  // given, not guessed: guessing re-scans the text for each chunk (slow on a 10⁶-column
  // header), and a file mixing line endings is read the same way throughout
  record_delimiter: ['\r\n', '\n', '\r'],
};

/**
 * Text that splits on commas exactly as csv-parse (trim, skip_empty_lines) reads it: no quote,
 * and no character csv-parse treats specially beyond space and tab (which `trim` removes at a
 * field's ends, as csv-parse's trim does for these two). Line breaks are handled by the caller.
 */
// eslint-disable-next-line no-control-regex
const NOT_PLAIN = /["\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\uffff]/;

/** Records of a CSV text, with the line each ends on; `onRecord` may return a promise to wait. */
export type CsvRecordHandler = (record: string[], line: number) => void | Promise<void>;

/**
 * Read the CSV records of a byte stream with csv-parse's semantics (options CSV_OPTIONS plus
 * trim). Plain lines (see NOT_PLAIN) are split on commas directly — csv-parse per record is the
 * cost of reading a large table — and from the first line that is not plain (a quote, a
 * control or non-ASCII character) to the end, the text goes through csv-parse itself. Field
 * counts are not checked here. Errors of csv-parse are rethrown with their line counted from
 * the start of the file.
 */
export async function readCsvRecords(
  chunks: AsyncIterable<Buffer>,
  onRecord: CsvRecordHandler,
): Promise<void> {
  const iterator = chunks[Symbol.asyncIterator]();
  let pending = ''; // the unfinished last line so far (plain text, so one byte per character)
  let carry: Buffer = Buffer.alloc(0); // bytes of a character cut at the end of the last chunk
  let line = 0; // lines finished so far
  let first = true;
  /** `blanks`: the text around this line has spaces or tabs, so fields may need trimming */
  const handleLine = (text: string, blanks: boolean): void | Promise<void> => {
    line++;
    if (text.length === 0) return;
    let fields = text.split(',');
    if (blanks && (text.includes(' ') || text.includes('\t'))) {
      fields = fields.map((f) => f.trim());
      if (fields.length === 1 && fields[0] === '') return;
    }
    return onRecord(fields, line);
  };
  try {
    for (;;) {
      const next = await iterator.next();
      const done = next.done === true;
      let bytes = done ? carry : carry.length ? Buffer.concat([carry, next.value]) : next.value;
      carry = done ? Buffer.alloc(0) : bytes.subarray(completeUtf8(bytes));
      bytes = bytes.subarray(0, bytes.length - carry.length);
      // ASCII is its own Latin-1 decoding, much quicker to make than UTF-8's
      let text = isAscii(bytes) ? bytes.toString('latin1') : bytes.toString('utf8');
      if (first && text.length) {
        if (text.charCodeAt(0) === 0xfeff) {
          text = text.slice(1);
          bytes = bytes.subarray(3);
        }
        first = false;
      }
      const bad = text.search(NOT_PLAIN);
      if (!done && bad < 0 && text.indexOf('\n') < 0 && text.indexOf('\r') < 0) {
        pending += text; // no line ends here (a very long line): nothing to split yet
        continue;
      }
      const buf = pending + text;
      const stop = bad < 0 ? buf.length : pending.length + bad;
      const blanks = buf.indexOf(' ') >= 0 || buf.indexOf('\t') >= 0;
      let pos = 0;
      let nl = buf.indexOf('\n');
      let cr = buf.indexOf('\r');
      if (cr < 0 && bad < 0) {
        // LF line ends only (the usual case): all complete lines of the text in one split
        const last = buf.lastIndexOf('\n');
        if (last >= 0) {
          const lines = buf.slice(0, last).split('\n');
          for (let i = 0; i < lines.length; i++) {
            const wait = handleLine(lines[i], blanks);
            if (wait) await wait;
          }
          pos = last + 1;
          nl = -1;
        }
      }
      for (;;) {
        if (nl >= 0 && nl < pos) nl = buf.indexOf('\n', pos);
        if (cr >= 0 && cr < pos) cr = buf.indexOf('\r', pos);
        const end = nl < 0 ? cr : cr < 0 ? nl : Math.min(nl, cr);
        if (end < 0 || end >= stop) break;
        // a CR at the very end may be the first half of a CRLF still to come
        if (end === cr && end === buf.length - 1 && !done) break;
        const wait = handleLine(buf.slice(pos, end), blanks);
        if (wait) await wait;
        pos = end + (end === cr && buf.charCodeAt(end + 1) === 10 ? 2 : 1);
      }
      if (bad >= 0) {
        // from the start of this line on, csv-parse reads the file's own bytes: everything
        // before the first character that is not plain is ASCII, one byte per character
        const from = pos - pending.length;
        const head =
          from >= 0
            ? bytes.subarray(from)
            : Buffer.concat([Buffer.from(pending.slice(pos), 'latin1'), bytes]);
        await viaCsvParse([head, carry], done ? undefined : iterator, line, onRecord);
        return;
      }
      pending = buf.slice(pos);
      if (done) {
        if (pending.length) {
          const wait = handleLine(pending, true);
          if (wait) await wait;
        }
        return;
      }
    }
  } finally {
    // an error (or a stop) mid-file: close the file behind the chunks
    await iterator.return?.();
  }
}

/** Length of the longest prefix of `b` that does not end inside a UTF-8 character. */
function completeUtf8(b: Buffer): number {
  const n = b.length;
  // the last lead byte among the final three, and whether its character is complete
  for (let k = 1; k <= Math.min(3, n); k++) {
    const c = b[n - k];
    if (c < 0x80) return n; // ASCII: complete
    if (c >= 0xc0) {
      const need = c >= 0xf0 ? 4 : c >= 0xe0 ? 3 : 2;
      return need > k ? n - k : n;
    }
  }
  return n; // only continuation bytes: invalid anyway, decoded as it stands
}

/** The rest of a CSV file through csv-parse: the bytes in `head`, then the rest of `iterator`. */
async function viaCsvParse(
  head: Buffer[],
  iterator: AsyncIterator<Buffer> | undefined,
  linesBefore: number,
  onRecord: CsvRecordHandler,
): Promise<void> {
  async function* rest(): AsyncGenerator<Buffer> {
    for (const b of head) if (b.length) yield b;
    if (!iterator) return;
    for (;;) {
      const next = await iterator.next();
      if (next.done) return;
      yield next.value;
    }
  }
  const source = Readable.from(rest(), { objectMode: false });
  const parser = source.pipe(
    parseCsv({
      ...CSV_OPTIONS,
      // a byte-order mark at the start of the file was taken off already
      bom: false,
      trim: true,
      info: true,
      relax_column_count: true,
    }),
  );
  try {
    for await (const { record, info } of parser as AsyncIterable<{
      record: string[];
      info: { lines: number };
    }>) {
      await onRecord(record, linesBefore + info.lines);
    }
  } catch (e) {
    if (e instanceof CsvError && linesBefore > 0) {
      // csv-parse counted lines from where it started: count them from the top of the file
      const err = e as CsvError & { lines?: number };
      if (err.lines !== undefined) err.lines += linesBefore;
      err.message = err.message.replace(
        /\bline (\d+)/g,
        (_, n: string) => `line ${Number(n) + linesBefore}`,
      );
    }
    throw e;
  } finally {
    source.destroy();
  }
}

/** CSV: the header, then every row checked and parsed. */
async function readCsv(path: string, onRow: RowHandler) {
  const hash = createHash('sha256');
  async function* hashed(): AsyncGenerator<Buffer> {
    for await (const chunk of createReadStream(path, { highWaterMark: 1 << 18 })) {
      hash.update(chunk as Buffer);
      yield chunk as Buffer;
    }
  }
  let header: ToaHeader | undefined;
  let width = 0;
  let rows = 0;
  try {
    await readCsvRecords(hashed(), (record, line) => {
      if (!header) {
        header = checkHeader(record);
        width = record.length;
        return;
      }
      if (record.length !== width)
        throw new InputError(`${record.length} fields where the header has ${width}`, {
          row: rows + 1,
          line,
        });
      rows++;
      return onRow(parseToaRecord(record, header, rows, line), record, header, false);
    });
  } catch (e) {
    if (e instanceof CsvError) {
      const err = e as CsvError & { lines?: number };
      const reason = err.message.replace(/^Invalid Record Length: |^Invalid Opening Quote: /, '');
      throw new InputError(reason, { row: rows + 1, line: err.lines });
    }
    if (e instanceof InputError && e.location.row !== undefined && e.location.line === undefined) {
      // an error of the row handler (which knows the row, not the line)
      const line = await lineOfRow(path, e.location.row).catch(() => undefined);
      throw new InputError(e.reason, { ...e.location, line });
    }
    throw e;
  }
  if (!header) throw new InputError('the file has no header line');
  if (rows === 0) throw new InputError('the file has a header but no data rows');
  return { header, rows, mjdWasNumber: false, sha256: hash.digest('hex') };
}

/** The file line on which data row `row` ends (header is row 0), for error messages. */
async function lineOfRow(path: string, row: number): Promise<number | undefined> {
  const parser = createReadStream(path).pipe(
    parseCsv({ ...CSV_OPTIONS, info: true, relax_column_count: true }),
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
    } catch {
      // where the line stops being JSON, in the line's own text (its mjd numbers unquoted)
      throw jsonSyntaxError(lineNo === 1 ? text.replace(/^\uFEFF/, '') : text, {
        row: rows,
        line: lineNo,
      });
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
  } catch {
    // the line and character in the file's own text (the parsed text had its mjd numbers quoted)
    throw jsonSyntaxError(text);
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

/**
 * Rows a table file holds, estimated from three samples (start, middle, end) of its bytes: the
 * mean spacing of line breaks (CSV, NDJSON) or of object openings (JSON array) between the first
 * and the last one in each sample, plus 3 %. Spacings, not counts, so a long header line or a
 * sample that starts mid-row does not skew it; the table grows if it falls short.
 */
export function estimateRows(path: string, size: number, layout: ToaLayout): number {
  const SAMPLE = 1 << 18;
  const places = size <= 3 * SAMPLE ? [0] : [0, Math.floor(size / 2), size - SAMPLE];
  const mark = layout === 'json' ? 0x7b /* { */ : 0x0a; /* \n */
  let span = 0;
  let gaps = 0;
  const fd = openSync(path, 'r');
  try {
    const buf = Buffer.alloc(places.length === 1 ? Math.min(size, 3 * SAMPLE) : SAMPLE);
    for (const at of places) {
      const n = readSync(fd, buf, 0, buf.length, at);
      const first = buf.indexOf(mark);
      if (first < 0 || first >= n) continue;
      let last = first;
      for (let i = buf.indexOf(mark, first + 1); i >= 0 && i < n; i = buf.indexOf(mark, i + 1)) {
        last = i;
        gaps++;
      }
      span += last - first;
    }
  } finally {
    closeSync(fd);
  }
  if (gaps === 0) return 1024;
  return Math.ceil((size / (span / gaps)) * 1.03) + 16;
}

/** Read a whole table into columns (dm fit, dm series); `name` as for `streamToas`. */
export async function readToaTable(
  path: string,
  name: string = path,
): Promise<{ table: ToaTable; summary: ReadSummary }> {
  let table: ToaTable | undefined;
  const size = statSync(path).size;
  const expectedRows = estimateRows(path, size, toaLayout(path, name));
  const summary = await streamToas(
    path,
    (row, _raw, header) => {
      table ??= new ToaTable(header, expectedRows);
      table.push(row);
    },
    name,
  );
  // a generous estimate (uneven rows) leaves columns larger than needed: give the rest back
  table!.trim(0.1);
  return { table: table!, summary };
}
