// Arrival-time tables (CSV, JSON array, NDJSON) through cli/io/read-toas.ts (streamToas,
// readToaTable) and shared/formats/toas.ts: generated valid files parse back to the values
// written; any mutation of their bytes and the hostile inputs give a result or an InputError
// naming the file (and the row, line and column where one is at fault), one line, ≤ 500 chars.
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { readToaTable, streamToas } from '../../cli/io/read-toas.js';
import { checkHeader, parseToaRecord, OPTIONAL_COLUMNS } from '../../shared/formats/toas.js';
import { parseDecimal } from '../../shared/formats/numbers.js';
import { InputError } from '../../shared/formats/errors.js';
import { CliError } from '../../cli/errors.js';
import type { ToaRow } from '../../shared/formats/toas.js';
import {
  check,
  deepArrays,
  expectBoundedInputError,
  deepObjects,
  expectInputError,
  HUGE_NUMBERS,
  locationOf,
  MAX_MESSAGE,
  mutateAll,
  mutationsArb,
  NON_FINITE_TEXT,
  outcome,
  rejects,
  scratch,
  tried,
  utf8,
  wideHeader,
} from './harness.js';

const FAMILY = 'arrival-time tables (CSV, JSON, NDJSON)';
const { write } = scratch('toas');

// ---------------------------------------------------------------------------------------------
// Valid tables

type Layout = 'csv' | 'json' | 'ndjson';
const NUMERIC = ['freq_mhz', 'err_us', 'residual_us', 'period_s', 'pulse', 'dm', 'dm_err'];

interface Spec {
  columns: string[];
  rows: Record<string, string>[];
  /** JSON layouts: write these numeric columns as bare numbers rather than strings */
  bare: boolean;
  mjdBare: boolean;
}

const num = (min: number, max: number) =>
  fc.double({ min, max, noNaN: true, noDefaultInfinity: true }).map((v) => String(v));
const mjdText = fc
  .tuple(fc.integer({ min: 40000, max: 70000 }), fc.stringMatching(/^\d{0,20}$/))
  .map(([d, f]) => (f ? `${d}.${f}` : `${d}`));

const valueArb: Record<string, fc.Arbitrary<string>> = {
  source: fc.stringMatching(/^[A-Z][A-Z0-9+-]{0,11}$/),
  mjd: mjdText,
  freq_mhz: num(10, 1e5),
  err_us: num(1e-3, 1e4),
  residual_us: num(-1e6, 1e6),
  receiver: fc.stringMatching(/^[a-z][a-z0-9_ ]{0,7}[a-z0-9]$/),
  period_s: num(1e-3, 10),
  pulse: fc.integer({ min: -1e9, max: 1e9 }).map(String),
  dm: num(0, 2000),
  dm_err: num(1e-6, 1),
};
/** unknown columns are kept as text, and may hold delimiters and quotes */
const extraValue = fc.string({ maxLength: 12 }).filter((s) => s.trim() === s && !/[\r\n]/.test(s));

const specArb: fc.Arbitrary<Spec> = fc
  .record({
    optional: fc.subarray(['residual_us', 'receiver', 'period_s', 'pulse', 'dm']),
    extras: fc.uniqueArray(fc.stringMatching(/^x_[a-z]{1,6}$/), { maxLength: 2 }),
    order: fc.infiniteStream(fc.double({ min: 0, max: 1, noNaN: true })),
    n: fc.integer({ min: 1, max: 12 }),
    bare: fc.boolean(),
    mjdBare: fc.boolean(),
  })
  .chain(({ optional, extras, order, n, bare, mjdBare }) => {
    const cols = ['source', 'mjd', 'freq_mhz', 'err_us', ...optional, ...extras];
    if (optional.includes('dm')) cols.push('dm_err');
    const keys = cols.map((c) => ({ c, k: order.next().value as number }));
    const columns = keys.sort((a, b) => a.k - b.k).map((x) => x.c);
    const row = fc.record(
      Object.fromEntries(columns.map((c) => [c, valueArb[c] ?? extraValue])) as Record<
        string,
        fc.Arbitrary<string>
      >,
    );
    return fc
      .array(row, { minLength: n, maxLength: n })
      .map((rows) => ({ columns, rows, bare, mjdBare }));
  });

const csvField = (v: string) =>
  /[",\r\n]/.test(v) || v !== v.trim() ? `"${v.replace(/"/g, '""')}"` : v;

function jsonObject(spec: Spec, r: Record<string, string>): string {
  const parts = spec.columns.map((c) => {
    const v = r[c];
    const bare = (c === 'mjd' && spec.mjdBare) || (spec.bare && NUMERIC.includes(c));
    return `${JSON.stringify(c)}:${bare ? v : JSON.stringify(v)}`;
  });
  return `{${parts.join(',')}}`;
}

function render(spec: Spec, layout: Layout): string {
  if (layout === 'csv')
    return (
      [
        spec.columns.map(csvField).join(','),
        ...spec.rows.map((r) => spec.columns.map((c) => csvField(r[c])).join(',')),
      ].join('\n') + '\n'
    );
  if (layout === 'ndjson') return spec.rows.map((r) => jsonObject(spec, r)).join('\n') + '\n';
  return `[\n${spec.rows.map((r) => jsonObject(spec, r)).join(',\n')}\n]\n`;
}

const layoutArb = fc.constantFrom<Layout>('csv', 'json', 'ndjson');

/** Read every row through streamToas, as `toas correct` does. */
async function readAll(path: string, name: string) {
  const rows: ToaRow[] = [];
  const summary = await streamToas(path, (r) => void rows.push(r), name);
  return { rows, summary };
}

function expectSane(rows: ToaRow[]) {
  expect(rows.length).toBeGreaterThan(0);
  for (const r of rows) {
    expect(r.freqMhz > 0 && Number.isFinite(r.freqMhz)).toBe(true);
    expect(r.errUs > 0 && Number.isFinite(r.errUs)).toBe(true);
    expect(Number.isFinite(r.epoch.day) && r.epoch.sec >= 0 && r.epoch.sec < 86400).toBe(true);
    expect(r.epoch.frac >= 0 && r.epoch.frac < 1).toBe(true);
  }
}

describe('arrival-time tables: valid files', () => {
  it('a generated table parses back to the values written, in every layout', async () => {
    await check(
      fc.asyncProperty(specArb, layoutArb, async (spec, layout) => {
        tried(FAMILY);
        const name = `valid.${layout}`;
        const path = write(name, render(spec, layout));
        const { rows, summary } = await readAll(path, name);
        expect(summary.layout).toBe(layout);
        expect(summary.rows).toBe(spec.rows.length);
        rows.forEach((r, i) => {
          const w = spec.rows[i];
          expect(r.row).toBe(i + 1);
          expect(r.source).toBe(w.source);
          expect(r.mjdText).toBe(w.mjd);
          expect(r.freqMhz).toBe(parseDecimal(w.freq_mhz));
          expect(r.errUs).toBe(parseDecimal(w.err_us));
          if (w.pulse !== undefined) expect(r.pulse).toBe(Number(w.pulse));
          if (w.receiver !== undefined) expect(r.receiver).toBe(w.receiver);
        });
        const { table } = await readToaTable(path, name);
        expect(table.length).toBe(spec.rows.length);
      }),
      60,
    );
  });
});

// ---------------------------------------------------------------------------------------------
// Mutated files

describe('arrival-time tables: byte-level mutations of valid files', () => {
  it('truncation, bit flips, inserted/duplicated/deleted bytes, BOMs, CRLF: a result or a typed error', async () => {
    await check(
      fc.asyncProperty(
        specArb,
        layoutArb,
        mutationsArb,
        fc.constantFrom('', 'noext'),
        async (spec, layout, ms, ext) => {
          tried(FAMILY);
          const name = ext ? `mutated-${ext}` : `mutated.${layout}`;
          const path = write(name, mutateAll(utf8(render(spec, layout)), ms));
          const r = await outcome(name, () => readAll(path, name));
          if (r.ok) expectSane(r.value.rows);
        },
      ),
      200,
    );
  });

  it('truncation at every byte of one file', async () => {
    const spec: Spec = {
      columns: ['source', 'mjd', 'freq_mhz', 'err_us', 'receiver'],
      rows: [
        { source: 'SBP-A', mjd: '60000.123', freq_mhz: '700', err_us: '1.5', receiver: 'low' },
        { source: 'SBP-A', mjd: '60000.124', freq_mhz: '1400', err_us: '0.5', receiver: 'mid' },
      ],
      bare: true,
      mjdBare: true,
    };
    for (const layout of ['csv', 'json', 'ndjson'] as const) {
      const bytes = utf8(render(spec, layout));
      for (let cut = 0; cut <= bytes.length; cut++) {
        tried(FAMILY);
        const name = `cut.${layout}`;
        const path = write(name, bytes.subarray(0, cut));
        const r = await outcome(name, () => readAll(path, name));
        if (r.ok) expectSane(r.value.rows);
      }
    }
  });
});

// ---------------------------------------------------------------------------------------------
// A bad value is reported at its row and column

const BAD_TOKENS = [
  'abc',
  'NaN',
  'Infinity',
  '-Infinity',
  '1e999',
  '0x10',
  '1,5',
  '1.2.3',
  '--1',
  '9'.repeat(300) + 'x',
];

describe('arrival-time tables: a bad value names its row, line and column', () => {
  it('CSV: any bad token in any numeric column', async () => {
    await check(
      fc.asyncProperty(
        specArb,
        fc.nat(),
        fc.nat(),
        fc.constantFrom(...BAD_TOKENS),
        async (spec, rowPick, colPick, token) => {
          tried(FAMILY);
          const cols = spec.columns.filter((c) => NUMERIC.includes(c) || c === 'mjd');
          const column = cols[colPick % cols.length];
          const row = rowPick % spec.rows.length;
          spec.rows[row] = { ...spec.rows[row], [column]: token };
          const name = 'bad-value.csv';
          const path = write(name, render(spec, 'csv'));
          const e = await rejects(name, () => readAll(path, name));
          // the first bad field read is this one: earlier rows are valid, and a row's fields are
          // checked source, mjd, freq_mhz, err_us, then the optional columns
          expect(locationOf(e)).toMatchObject({ file: name, row: row + 1, line: row + 2, column });
        },
      ),
      80,
    );
  });

  it('JSON and NDJSON: values that are neither text nor a finite number (arrays, objects, booleans, null)', async () => {
    const odd = fc.constantFrom(
      '["60000.1"]',
      '[700]',
      '{"v":1}',
      'true',
      'false',
      'null',
      '[]',
      '{}',
      '"1\\n2"',
      '"a\\u001b[31mred"',
    );
    await check(
      fc.asyncProperty(
        specArb,
        fc.constantFrom<Layout>('json', 'ndjson'),
        fc.nat(),
        fc.constantFrom('source', 'mjd', 'freq_mhz', 'err_us'),
        odd,
        async (spec, layout, rowPick, column, raw) => {
          tried(FAMILY);
          const row = rowPick % spec.rows.length;
          const text = render({ ...spec, bare: false, mjdBare: false }, layout);
          // replace the value of `column` in row `row` by the raw JSON text
          const lines = text.split('\n');
          const li = layout === 'json' ? row + 1 : row;
          const key = `${JSON.stringify(column)}:`;
          const at = lines[li].indexOf(key) + key.length;
          const end = at + JSON.stringify(spec.rows[row][column]).length;
          lines[li] = lines[li].slice(0, at) + raw + lines[li].slice(end);
          const name = `odd-value.${layout}`;
          const path = write(name, lines.join('\n'));
          const r = await outcome(name, () => readAll(path, name));
          // "1\n2" and an escape sequence are text: refused as a number or an MJD; as a source
          // name they may pass, but then never with a control character reaching a message
          if (r.ok) {
            expect(column).toBe('source');
            expect(raw.startsWith('"')).toBe(true);
            return;
          }
          expect(locationOf(r.error)).toMatchObject({ file: name, row: row + 1, column });
          if (layout === 'ndjson') expect(locationOf(r.error).line).toBe(row + 1);
          expect(r.error.message.includes('\u001b')).toBe(false);
        },
      ),
      80,
    );
  });
});

// ---------------------------------------------------------------------------------------------
// Hostile inputs

const HEAD = 'source,mjd,freq_mhz,err_us';

async function hostile(name: string, text: string | Uint8Array) {
  tried(FAMILY);
  const path = write(name, text);
  return outcome(name, () => readAll(path, name));
}

describe('arrival-time tables: hostile inputs', () => {
  it('a 1 MB run of digits ending in a bad character, in each numeric column and the MJD (no quadratic backtracking)', async () => {
    const digits = '9'.repeat(1 << 20);
    for (const column of ['mjd', 'freq_mhz', 'err_us']) {
      const row: Record<string, string> = {
        source: 'X',
        mjd: '60000.1',
        freq_mhz: '700',
        err_us: '1',
      };
      row[column] = `${digits}x`;
      const name = `digits-${column}.csv`;
      const r = await hostile(
        name,
        `${HEAD}\n${[row.source, row.mjd, row.freq_mhz, row.err_us].join(',')}\n`,
      );
      expect(r.ok).toBe(false);
      if (!r.ok) expect(locationOf(r.error)).toMatchObject({ row: 1, line: 2, column });
    }
    // a fraction of 1 MB of digits is a valid (if silly) MJD text; 0.333… stays on its day
    const r = await hostile('digits-frac.csv', `${HEAD}\nX,60000.${'3'.repeat(1 << 20)},700,1\n`);
    expect(r.ok).toBe(true);
    if (r.ok) expect(r.value.rows[0].epoch).toMatchObject({ day: 60000, sec: 28800 });
  });

  it('a 1 MB integer MJD, and 1 MB of digits in parseDecimal directly', async () => {
    const r = await hostile('mjd-huge.csv', `${HEAD}\nX,${'1'.repeat(1 << 20)},700,1\n`);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(locationOf(r.error)).toMatchObject({ row: 1, column: 'mjd' });
    expect(parseDecimal('1'.repeat(1 << 20) + '.')).toBeUndefined(); // not finite as a double
    expect(parseDecimal('1'.repeat(1 << 20) + 'x')).toBeUndefined();
    expect(parseDecimal('.' + '1'.repeat(1 << 20) + 'e')).toBeUndefined();
  });

  it('huge numbers and non-finite text in every numeric column', async () => {
    for (const column of ['freq_mhz', 'err_us', 'residual_us']) {
      for (const v of [...HUGE_NUMBERS, ...NON_FINITE_TEXT]) {
        const row: Record<string, string> = {
          source: 'X',
          mjd: '60000.1',
          freq_mhz: '700',
          err_us: '1',
          residual_us: '0',
        };
        row[column] = v;
        const name = 'huge.csv';
        const r = await hostile(name, `${HEAD},residual_us\n${Object.values(row).join(',')}\n`);
        if (r.ok) {
          // only number text a double holds (possibly as 0 or after rounding) may pass
          expect(Number.isFinite(Number(v))).toBe(true);
          expectSane(r.value.rows);
        } else expect(locationOf(r.error)).toMatchObject({ row: 1, line: 2, column });
      }
    }
  });

  it('a 1 MB header line: one huge column name, and the same huge name twice', async () => {
    const big = 'n'.repeat(1 << 20);
    const r1 = await hostile('header-one.csv', `${big}\nX\n`);
    expect(r1.ok).toBe(false);
    const r2 = await hostile('header-twice.csv', `${HEAD},${big},${big}\nX,60000.1,700,1,a,b\n`);
    expect(r2.ok).toBe(false);
    if (!r2.ok) expect(locationOf(r2.error)).toMatchObject({ line: 1 });
    // the same in NDJSON (keys of the first object) and a JSON array
    const obj = `{"source":"X","mjd":"60000.1","freq_mhz":700,"err_us":1,"${big}":1}`;
    const r3 = await hostile('header-key.ndjson', `${obj}\n`);
    if (r3.ok) expect(r3.value.rows).toHaveLength(1);
    const r4 = await hostile('semi-huge.csv', `${big};x\n1;2\n`);
    expect(r4.ok).toBe(false);
  });

  it('10⁶ columns: a header of 10⁶ names, and a row of 10⁶ fields under a normal header', async () => {
    const n = 1_000_000;
    const r1 = await hostile(
      'wide.csv',
      `${wideHeader(n, ['source', 'mjd', 'freq_mhz', 'err_us'])}\nX\n`,
    );
    expect(r1.ok).toBe(false);
    if (!r1.ok) {
      expect(locationOf(r1.error)).toMatchObject({ line: 1 });
      expect(r1.error.message).toMatch(/at most 1024/);
    }
    const row = ['X', '60000.1', '700', '1', ...new Array<string>(n - 4).fill('0')].join(',');
    const r2 = await hostile('wide-row.csv', `${HEAD}\nX,60000.1,700,1\n${row}\n`);
    expect(r2.ok).toBe(false);
    if (!r2.ok) expect(locationOf(r2.error)).toMatchObject({ row: 2, line: 3 });
  });

  it('10⁶ columns in one JSON object (the first row, which gives the header)', async () => {
    const keys = Array.from({ length: 1_000_000 }, (_, i) => `"c${i}":0`).join(',');
    const wide = `{"source":"X","mjd":"60000.1","freq_mhz":700,"err_us":1,${keys}}`;
    const r1 = await hostile('wide.ndjson', `${wide}\n`);
    expect(r1.ok).toBe(false);
    if (!r1.ok) expect(locationOf(r1.error)).toMatchObject({ line: 1 });
  });

  it('deep nesting: 10⁵ nested arrays as the file, as a row, and as a value', async () => {
    const deep = deepArrays(100_000);
    const r1 = await hostile('deep.json', deep);
    expect(r1.ok).toBe(false);
    const r2 = await hostile('deep.ndjson', `${deep}\n`);
    expect(r2.ok).toBe(false);
    if (!r2.ok) expect(locationOf(r2.error)).toMatchObject({ row: 1, line: 1 });
    for (const column of ['source', 'mjd', 'freq_mhz', 'receiver']) {
      const v = (c: string, dflt: string) => (c === column ? deep : dflt);
      const obj = `{"source":${v('source', '"X"')},"mjd":${v('mjd', '"60000.1"')},"freq_mhz":${v('freq_mhz', '700')},"err_us":1,"receiver":${v('receiver', '"a"')}}`;
      const r3 = await hostile(`deep-${column}.ndjson`, `${obj}\n`);
      expect(r3.ok).toBe(false);
      if (!r3.ok) expect(locationOf(r3.error)).toMatchObject({ row: 1, line: 1, column });
      const r4 = await hostile(`deep-${column}.json`, `[${obj}]`);
      expect(r4.ok).toBe(false);
      if (!r4.ok) expect(locationOf(r4.error)).toMatchObject({ row: 1, column });
    }
    const r5 = await hostile('deep-objects.json', `[${deepObjects(100_000)}]`);
    expect(r5.ok).toBe(false);
    // an unknown column may hold anything JSON: deep nesting there is kept, not an error
    const r6 = await hostile(
      'deep-extra.ndjson',
      `{"source":"X","mjd":"60000.1","freq_mhz":700,"err_us":1,"x":${deep}}\n`,
    );
    if (!r6.ok) expect(r6.error).toBeInstanceOf(InputError);
  });

  it('overlong lines: a 4 MB source name, a 4 MB NDJSON line of garbage, a line of NUL bytes', async () => {
    const huge = 's'.repeat(4 << 20);
    const r1 = await hostile('long-source.csv', `${HEAD}\n${huge},60000.1,700,1\n`);
    if (r1.ok) expect(r1.value.rows[0].source).toHaveLength(huge.length);
    const r2 = await hostile('garbage.ndjson', `{"source":"${'x'.repeat(4 << 20)}\n`);
    expect(r2.ok).toBe(false);
    const r3 = await hostile('nul.csv', new Uint8Array(1 << 20));
    expect(r3.ok).toBe(false);
    const r4 = await hostile('long-value.csv', `${HEAD}\nX,60000.1,${'7'.repeat(4 << 20)}.x,1\n`);
    expect(r4.ok).toBe(false);
  });

  it('empty, blank, BOM-only and header-only files', async () => {
    for (const [name, text] of [
      ['empty.csv', ''],
      ['blank.csv', '\n\n  \n'],
      ['bom.csv', '\uFEFF'],
      ['bom.json', '\uFEFF[]'],
      ['head.csv', `${HEAD}\n`],
      ['empty-array.json', '[]'],
      ['scalar.json', '[1]'],
      ['null.json', 'null'],
      ['nothing.ndjson', '\n\n'],
    ] as const) {
      const r = await hostile(name, text);
      expect(r.ok).toBe(false);
    }
  });

  it('a JSON array with a syntax error names the line (awaiting the read-toas fix)', async () => {
    const text =
      '[\n{"source":"X","mjd":"60000.1","freq_mhz":700,"err_us":1},\n{"source":"X",,}\n]\n';
    const r = await hostile('syntax.json', text);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(locationOf(r.error).line).toBe(3);
  });
});

// ---------------------------------------------------------------------------------------------
// shared/formats/toas.ts directly: header and record checks on arbitrary values

describe('shared/formats/toas.ts on arbitrary JSON values', () => {
  it('parseToaRecord: any JSON value in any column gives a row or an InputError naming the row and column', () => {
    const header = checkHeader(['source', 'mjd', 'freq_mhz', 'err_us', ...OPTIONAL_COLUMNS]);
    const value = fc.oneof(
      fc.jsonValue({ maxDepth: 3 }),
      fc.constantFrom<unknown>('60000.5', '700', '1', 'NaN', ' 12 ', '1e5', '-3'),
    );
    fc.assert(
      fc.property(
        fc.dictionary(fc.constantFrom(...header.columns), value),
        fc.integer({ min: 1, max: 1e6 }),
        (rec, row) => {
          tried(FAMILY);
          const full = {
            source: 'X',
            mjd: '60000.5',
            freq_mhz: 700,
            err_us: 1,
            residual_us: 0,
            receiver: 'a',
            period_s: 0.1,
            pulse: 3,
            dm: 10,
            dm_err: 0.1,
            ...rec,
          };
          try {
            const r = parseToaRecord(full as never, header, row);
            expect(Number.isFinite(r.freqMhz) && r.freqMhz > 0).toBe(true);
            expect(typeof r.source).toBe('string');
            expect(typeof r.mjdText).toBe('string');
          } catch (e) {
            const err = expectBoundedInputError(e);
            expect(err.location.row).toBe(row);
            const column = err.location.column;
            expect(column === undefined || header.columns.includes(column)).toBe(true);
          }
        },
      ),
      { numRuns: 300 },
    );
  });

  it('checkHeader: arbitrary column lists give a header or a bounded one-line InputError on line 1', () => {
    const name = fc.oneof(
      fc.constantFrom('source', 'mjd', 'freq_mhz', 'err_us', 'dm', 'dm_err', 'a;b', 'a\tb', 'x|y'),
      fc.string({ maxLength: 20 }),
      fc.constant('q'.repeat(10_000)),
      fc.constant('line\nbreak'),
    );
    fc.assert(
      fc.property(fc.array(name, { maxLength: 8 }), (cols) => {
        tried(FAMILY);
        try {
          const h = checkHeader(cols);
          expect(h.columns).toEqual(cols);
        } catch (e) {
          const err = expectBoundedInputError(e);
          expect(err.location.line).toBe(1);
        }
      }),
      { numRuns: 300 },
    );
  });

  it('every error message of a reader names the file (checked by expectInputError)', () => {
    // the harness's own check must fail on an error without the file, a long one and a foreign one
    expect(() => expectInputError(new InputError('x'), 'f.csv')).toThrow(/without the file/);
    expect(() => expectInputError(new CliError(`f.csv: ${'y'.repeat(600)}`, 2), 'f.csv')).toThrow(
      /characters/,
    );
    expect(() => expectInputError(new CliError('f.csv: failed', 1), 'f.csv')).toThrow(/exit 1/);
    expect(() => expectInputError(new TypeError('boom'), 'f.csv')).toThrow(
      /not a typed input error/,
    );
    expect(() => expectInputError(new CliError('f.csv: a\nb', 2), 'f.csv')).toThrow(/spans lines/);
    // and InputError itself keeps a reason on one short line
    const long = new InputError(`a\nb${'y'.repeat(5000)}`, { file: 'f.csv', column: 'c\u001b' });
    expect(long.message.includes('\n') || long.message.includes('\u001b')).toBe(false);
    expect(long.message.length).toBeLessThanOrEqual(MAX_MESSAGE);
    expect(
      expectInputError(new InputError('fine', { file: 'f.csv', row: 2 }), 'f.csv'),
    ).toBeInstanceOf(InputError);
  });
});
