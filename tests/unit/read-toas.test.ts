// cli/io/read-toas.ts: the CSV fast path reads records exactly as csv-parse does (the reference:
// csv-parse itself, with the reader's options), however the bytes are cut into chunks; a JSON
// array with a syntax error names its line and character; the row estimate that sizes the
// columns.
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { parse } from 'csv-parse/sync';
import { estimateRows, readCsvRecords, readToaTable, streamToas } from '../../cli/io/read-toas.js';
import { InputError } from '../../shared/formats/errors.js';
import { tempDir } from '../helpers/cli.js';

const { dir, cleanup } = tempDir('sightline-read-toas-');
afterAll(cleanup);

/** csv-parse with the reader's options: the records and the line each ends on, or the error. */
function reference(text: string | Buffer) {
  try {
    const out = parse(typeof text === 'string' ? Buffer.from(text, 'utf8') : text, {
      bom: true,
      skip_empty_lines: true,
      trim: true,
      record_delimiter: ['\r\n', '\n', '\r'],
      relax_column_count: true,
      info: true,
    }) as unknown as Array<{ record: string[]; info: { lines: number } }>;
    return { records: out.map((r) => [r.info.lines, ...r.record]) };
  } catch (e) {
    return { error: e as Error & { code?: string; lines?: number } };
  }
}

/** The reader on the same bytes, cut at the given places. */
async function ours(text: string | Buffer, cuts: number[]) {
  const bytes = typeof text === 'string' ? Buffer.from(text, 'utf8') : text;
  const at = [...new Set(cuts.map((c) => c % (bytes.length + 1)))].sort((a, b) => a - b);
  async function* chunks() {
    let from = 0;
    for (const c of [...at, bytes.length]) {
      yield bytes.subarray(from, c);
      from = c;
    }
  }
  const records: Array<Array<string | number>> = [];
  try {
    await readCsvRecords(chunks(), (record, line) => void records.push([line, ...record]));
    return { records };
  } catch (e) {
    return { records, error: e as Error & { code?: string; lines?: number } };
  }
}

// characters csv-parse treats specially (delimiter, quote, line ends, whitespace it trims:
// space, tab, VT, NBSP, EM SPACE, BOM), multi-byte UTF-8, and plain text
const PIECES = [
  'a',
  'b2',
  '60000.1',
  ',',
  ',',
  ' ',
  '\t',
  '\n',
  '\n',
  '\r',
  '\r\n',
  '"',
  '""',
  '\u000b',
  '\u00a0',
  '\u2003',
  '\ufeff',
  'é',
  '日本',
  'x y',
];
const textArb = fc.array(fc.constantFrom(...PIECES), { maxLength: 40 }).map((p) => p.join(''));
const cutsArb = fc.array(fc.nat({ max: 200 }), { maxLength: 6 });

describe('CSV records: the fast path agrees with csv-parse', () => {
  it('records, their lines and errors match csv-parse on arbitrary text in arbitrary chunks', async () => {
    await fc.assert(
      fc.asyncProperty(textArb, cutsArb, async (text, cuts) => {
        const want = reference(text);
        const got = await ours(text, cuts);
        if (want.error) {
          // the records before the error were handed on; the error is csv-parse's, same line
          expect(got.error?.constructor.name).toBe(want.error.constructor.name);
          expect(got.error?.code).toBe(want.error.code);
          expect(got.error?.lines).toBe(want.error.lines);
          expect(got.error?.message).toBe(want.error.message);
        } else {
          expect(got.error).toBeUndefined();
          expect(got.records).toEqual(want.records);
        }
      }),
      { numRuns: 3000 },
    );
  });

  it('the same on arbitrary bytes, invalid UTF-8 included (cut lead bytes, stray continuations)', async () => {
    // ASCII that matters to CSV, and bytes of broken and whole UTF-8 sequences
    const BYTES = [
      0x61, 0x31, 0x2c, 0x2c, 0x20, 0x09, 0x0a, 0x0a, 0x0d, 0x22, 0xc3, 0xa9, 0xe6, 0x97, 0xa5,
      0xf0, 0x9f, 0x98, 0x80, 0x80, 0xff, 0xef, 0xbb, 0xbf,
    ];
    await fc.assert(
      fc.asyncProperty(
        fc.array(fc.constantFrom(...BYTES), { maxLength: 40 }),
        cutsArb,
        async (list, cuts) => {
          const bytes = Buffer.from(list);
          const want = reference(bytes);
          const got = await ours(bytes, cuts);
          if (want.error) {
            expect(got.error?.code).toBe(want.error.code);
            expect(got.error?.message).toBe(want.error.message);
          } else {
            expect(got.error).toBeUndefined();
            expect(got.records).toEqual(want.records);
          }
        },
      ),
      { numRuns: 3000 },
    );
  });

  it('plain files with LF, CRLF and CR line ends, BOM, blank lines and padded fields', async () => {
    const cases = [
      'source,mjd\nX,1\nY,2\n',
      '\ufeffsource,mjd\r\nX,1\r\n\r\nY,2',
      'source,mjd\rX,1\rY,2\r',
      ' source , mjd \n\t\n X ,\t1\t\n  \n',
      'a,b\n1,2\n"q",3\n4,5\n', // a quote switches to csv-parse for the rest, lines counted on
      'a,b\n1,2\n"x\ny",3\n4,5,6\n',
    ];
    for (const text of cases) {
      for (const cuts of [[], [1], [3, 4, 5], [7, 8, 9, 10, 11, 12, 13, 14, 15]]) {
        expect(await ours(text, cuts), JSON.stringify({ text, cuts })).toEqual(reference(text));
      }
    }
  });

  it('a line far longer than a chunk (a 10⁶-column header) is read whole', async () => {
    const header = Array.from({ length: 1_000_000 }, (_, i) => `c${i}`).join(',');
    const got = await ours(`${header}\n1,2\n`, [10, 70_000, 300_000, 4_000_000]);
    expect(got.records).toHaveLength(2);
    expect(got.records[0]).toHaveLength(1_000_001);
    expect(got.records[1]).toEqual([2, '1', '2']);
  });
});

describe('a JSON array with a syntax error names the line and character', () => {
  const row = '{"source":"X","mjd":60000.1,"freq_mhz":700,"err_us":1}';
  const cases: Array<[string, string, number, number]> = [
    ['missing comma', `[\n${row},\n${row}\n${row}\n]\n`, 4, 1],
    ['doubled comma', `[\n${row},\n{"source":"X",,"mjd":"1"}\n]\n`, 3, 15],
    ['unquoted value', `[\n${row},\n  {"source": X}\n]`, 3, 14],
    ['cut short', `[\n${row},\n${row.slice(0, 20)}`, 3, 21],
    ['text after the array', `[\n${row}\n]\n]\n`, 4, 1],
  ];
  for (const [what, text, line, char] of cases) {
    it(what, async () => {
      const path = join(dir, 'syntax.json');
      writeFileSync(path, text);
      const e = await streamToas(path, () => {}).then(
        () => expect.unreachable(),
        (x: unknown) => x as InputError,
      );
      expect(e).toBeInstanceOf(InputError);
      expect(e.location).toMatchObject({ file: path, line });
      expect(e.message).toMatch(
        new RegExp(`line ${line}: not valid JSON at character ${char} \\(`),
      );
      expect(e.message).not.toMatch(/\n/);
    });
  }

  it('NDJSON: the line of the file and the character in it', async () => {
    const path = join(dir, 'syntax.ndjson');
    writeFileSync(
      path,
      `${'{"source":"X","mjd":"60000.1","freq_mhz":700,"err_us":1}'}\n{"source":"X" "mjd":1}\n`,
    );
    await expect(streamToas(path, () => {})).rejects.toThrow(
      /syntax\.ndjson: row 2, line 2: not valid JSON at character 15 \(/,
    );
  });
});

describe('the row estimate that sizes the columns', () => {
  it('is within a few per cent above the rows of a uniform file, and never far below', async () => {
    const lines = ['source,mjd,freq_mhz,err_us'];
    for (let i = 0; i < 100_000; i++)
      lines.push(`S${i % 7},${60000 + i / 1e4},${700 + (i % 50)},1.5`);
    const path = join(dir, 'uniform.csv');
    writeFileSync(path, lines.join('\n') + '\n');
    const rows = lines.length - 1;
    const est = estimateRows(path, Buffer.byteLength(lines.join('\n') + '\n'), 'csv');
    expect(est).toBeGreaterThanOrEqual(rows);
    expect(est).toBeLessThan(rows * 1.06);
    // the table read from it keeps every row, and no more than the estimate's slack
    const { table } = await readToaTable(path);
    expect(table.length).toBe(rows);
    expect(table.allocatedRows).toBeLessThan(rows * 1.11);
  });

  it('a long header does not skew it (samples from the middle and the end)', () => {
    const header = [
      'source',
      'mjd',
      'freq_mhz',
      'err_us',
      ...Array.from({ length: 40_000 }, (_, i) => `x${i}`),
    ];
    const filler = ',0'.repeat(40_000);
    const lines = [header.join(',')];
    for (let i = 0; i < 300; i++) lines.push(`S,60000.${i},700,1${filler}`);
    const text = lines.join('\n') + '\n';
    const path = join(dir, 'wide.csv');
    writeFileSync(path, text);
    const est = estimateRows(path, Buffer.byteLength(text), 'csv');
    expect(est).toBeGreaterThanOrEqual(300);
    expect(est).toBeLessThan(400);
  });
});
