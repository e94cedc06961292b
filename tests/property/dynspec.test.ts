// Dynamic spectra through cli/io/read-dynspec.ts: a .npy [nchan, nsub] with its sidecar, or a
// long-form CSV freq_mhz,time_s,intensity. Valid files generated on uniform grids read back to
// the grid written; mutated and hostile files give a dynamic spectrum or a bounded one-line
// InputError naming the file at fault (and the line, row and column where one is).
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { DYNSPEC_CSV_MAX_FIELDS, readDynspec } from '../../cli/io/read-dynspec.js';
import { InputError } from '../../shared/formats/errors.js';
import { MAX_GRID_CELLS, type DynSpec } from '../../shared/scint/dynspec.js';
import { writeNpy } from '../../shared/profiles/npy-write.js';
import {
  check,
  deepArrays,
  HUGE_NUMBERS,
  locationOf,
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

const FAMILY = 'dynamic spectra (.npy + sidecar, CSV)';
const { write } = scratch('dynspec');

interface Grid {
  nchan: number;
  nsub: number;
  f0: number;
  df: number;
  t0: number;
  dt: number;
  /** nchan × nsub, row-major; NaN = missing */
  values: number[];
  descending: boolean;
  explicitAxes: boolean;
}

const gridArb: fc.Arbitrary<Grid> = fc
  .record({
    nchan: fc.integer({ min: 8, max: 20 }),
    nsub: fc.integer({ min: 8, max: 20 }),
    f0: fc.integer({ min: 100, max: 3000 }),
    df: fc.constantFrom(0.125, 0.25, 0.5, 1, 2),
    t0: fc.constantFrom(0, 10, -5),
    dt: fc.constantFrom(1, 2.5, 10, 60),
    descending: fc.boolean(),
    explicitAxes: fc.boolean(),
  })
  .chain((g) =>
    fc
      .array(
        fc.oneof(
          { weight: 9, arbitrary: fc.double({ min: -1e3, max: 1e3, noNaN: true }) },
          { weight: 1, arbitrary: fc.constant(NaN) },
        ),
        { minLength: g.nchan * g.nsub, maxLength: g.nchan * g.nsub },
      )
      .map((values) => ({ ...g, values })),
  );

const freqAt = (g: Grid, c: number) => g.f0 + c * g.df;
const timeAt = (g: Grid, t: number) => g.t0 + t * g.dt;

function npyFiles(g: Grid): { npy: Uint8Array; sidecar: string } {
  // descending: channel 0 of the file is the highest frequency
  const rows = Array.from({ length: g.nchan }, (_, c) => (g.descending ? g.nchan - 1 - c : c));
  const values = rows.flatMap((c) => g.values.slice(c * g.nsub, (c + 1) * g.nsub));
  const freqs = rows.map((c) => freqAt(g, c));
  const sidecar = {
    source: 'SBP-A',
    mjd: '60000.5',
    freqs_mhz: g.explicitAxes ? freqs : { start: freqs[0], step: g.descending ? -g.df : g.df },
    times_s: g.explicitAxes
      ? Array.from({ length: g.nsub }, (_, t) => timeAt(g, t))
      : { start: g.t0, step: g.dt },
  };
  return { npy: writeNpy(values, [g.nchan, g.nsub], '<f8'), sidecar: JSON.stringify(sidecar) };
}

/** Long-form CSV of the grid, rows in a given order; NaN written as "nan" or left out. */
function csvText(g: Grid, order: number[], dropMissing: boolean): string {
  const lines = ['freq_mhz,time_s,intensity'];
  for (const k of order) {
    const c = Math.floor(k / g.nsub);
    const t = k % g.nsub;
    const v = g.values[k];
    if (Number.isNaN(v) && dropMissing) continue;
    lines.push(`${freqAt(g, c)},${timeAt(g, t)},${Number.isNaN(v) ? 'nan' : v}`);
  }
  return lines.join('\n') + '\n';
}

const orderArb = (g: Grid) =>
  fc.infiniteStream(fc.double({ min: 0, max: 1, noNaN: true })).map((s) =>
    Array.from({ length: g.nchan * g.nsub }, (_, k) => ({ k, r: s.next().value as number }))
      .sort((a, b) => a.r - b.r)
      .map((x) => x.k),
  );

function expectGrid(ds: DynSpec, g: Grid) {
  expect(ds.nchan).toBe(g.nchan);
  expect(ds.nsub).toBe(g.nsub);
  expect(ds.dfMhz).toBeCloseTo(g.df, 12);
  expect(ds.dtS).toBeCloseTo(g.dt, 12);
  for (let k = 0; k < g.values.length; k++) {
    const v = g.values[k];
    if (Number.isNaN(v)) expect(ds.inputMask[k]).toBe(1);
    else {
      expect(ds.inputMask[k]).toBe(0);
      expect(ds.data[k] + 0).toBe(v + 0); // CSV text has no negative zero
    }
  }
}

function expectSane(ds: DynSpec) {
  expect(ds.nchan).toBeGreaterThanOrEqual(8);
  expect(ds.nsub).toBeGreaterThanOrEqual(8);
  expect(Number.isFinite(ds.dfMhz) && ds.dfMhz > 0).toBe(true);
  expect(Number.isFinite(ds.dtS) && ds.dtS > 0).toBe(true);
  expect(ds.data.every(Number.isFinite)).toBe(true);
  expect(ds.freqs.every((f) => Number.isFinite(f) && f > 0)).toBe(true);
}

describe('dynamic spectra: valid files', () => {
  it('a .npy with its sidecar (ascending or descending channels, explicit or {start, step} axes)', async () => {
    await check(
      fc.asyncProperty(gridArb, async (g) => {
        tried(FAMILY);
        const { npy, sidecar } = npyFiles(g);
        const path = write('v.npy', npy);
        write('v.npy.json', sidecar);
        expectGrid((await readDynspec(path)).ds, g);
      }),
      40,
    );
  });

  it('a long-form CSV in any row order, missing pixels as "nan" or left out', async () => {
    await check(
      fc.asyncProperty(
        gridArb.chain((g) => fc.tuple(fc.constant(g), orderArb(g), fc.boolean())),
        async ([g, order, drop]) => {
          tried(FAMILY);
          // a dropped row is a missing pixel, but a whole channel or time left out changes the grid
          const keep = (k: number) => !(drop && Number.isNaN(g.values[k]));
          const chans = new Set(order.filter(keep).map((k) => Math.floor(k / g.nsub)));
          const subs = new Set(order.filter(keep).map((k) => k % g.nsub));
          fc.pre(chans.size === g.nchan && subs.size === g.nsub);
          const path = write('v.csv', csvText(g, order, drop));
          expectGrid((await readDynspec(path)).ds, g);
        },
      ),
      40,
    );
  });
});

describe('dynamic spectra: mutated files', () => {
  it('mutations of the .npy, of its sidecar, and of a CSV', async () => {
    await check(
      fc.asyncProperty(
        gridArb,
        mutationsArb,
        fc.constantFrom('npy', 'sidecar', 'csv'),
        async (g, ms, which) => {
          tried(FAMILY);
          if (which === 'csv') {
            const name = 'm.csv';
            const path = write(name, mutateAll(utf8(csvText(g, [...g.values.keys()], false)), ms));
            const r = await outcome(path, () => readDynspec(path));
            if (r.ok) expectSane(r.value.ds);
            return;
          }
          const { npy, sidecar } = npyFiles(g);
          const path = write('m.npy', which === 'npy' ? mutateAll(npy, ms) : npy);
          const meta = write(
            'm.npy.json',
            which === 'sidecar' ? mutateAll(utf8(sidecar), ms) : utf8(sidecar),
          );
          try {
            expectSane((await readDynspec(path)).ds);
          } catch (e) {
            const file = e instanceof InputError ? e.location.file : undefined;
            expect(file === path || file === meta, String(e)).toBe(true);
            await outcome(file!, () => {
              throw e;
            });
          }
        },
      ),
      200,
    );
  });
});

describe('dynamic spectra: a bad value names its row, line and column', () => {
  it('CSV: a bad token in a row (after blank lines, so the line is not the row + 1)', async () => {
    await check(
      fc.asyncProperty(
        gridArb,
        fc.nat(),
        fc.constantFrom('freq_mhz', 'time_s', 'intensity'),
        fc.constantFrom('abc', 'Infinity', '1e999', '0x10', '9'.repeat(500) + 'x', ''),
        async (g, pick, column, token) => {
          tried(FAMILY);
          fc.pre(!(column === 'intensity' && token === '')); // an empty intensity is a missing pixel
          const lines = csvText(g, [...g.values.keys()], false)
            .trimEnd()
            .split('\n');
          const row = 1 + (pick % (lines.length - 1));
          const fields = lines[row].split(',');
          fields[['freq_mhz', 'time_s', 'intensity'].indexOf(column)] = token;
          lines[row] = fields.join(',');
          lines.splice(1, 0, '', ''); // two blank lines after the header
          const path = write('bad.csv', lines.join('\n'));
          const e = await rejects(path, () => readDynspec(path));
          expect(locationOf(e)).toMatchObject({ row, line: row + 3, column });
        },
      ),
      60,
    );
  });
});

describe('dynamic spectra: hostile inputs', () => {
  const G: Grid = {
    nchan: 8,
    nsub: 8,
    f0: 1400,
    df: 1,
    t0: 0,
    dt: 10,
    values: Array.from({ length: 64 }, (_, k) => Math.sin(k)),
    descending: false,
    explicitAxes: false,
  };
  const hostile = async (name: string, text: string | Uint8Array) => {
    tried(FAMILY);
    const path = write(name, text);
    return outcome(path, () => readDynspec(path));
  };

  it(`CSV lines of more than ${DYNSPEC_CSV_MAX_FIELDS} fields: a header of 10⁶ names, and one wide row`, async () => {
    const r1 = await hostile(
      'wide.csv',
      `${wideHeader(1_000_000, ['freq_mhz', 'time_s', 'intensity'])}\n1,2,3\n`,
    );
    expect(r1.ok).toBe(false);
    if (!r1.ok) {
      expect(locationOf(r1.error)).toMatchObject({ line: 1 });
      expect(r1.error.message).toMatch(/at most 1024/);
    }
    const rows = csvText(G, [...G.values.keys()], false).split('\n');
    rows.splice(5, 0, new Array(DYNSPEC_CSV_MAX_FIELDS + 1).fill('1').join(','));
    const r2 = await hostile('wide-row.csv', rows.join('\n'));
    expect(r2.ok).toBe(false);
    if (!r2.ok) expect(locationOf(r2.error)).toMatchObject({ line: 6 });
  });

  it(`a sparse grid of more than 2^24 cells from a few thousand rows`, async () => {
    // 5000 rows, each at its own frequency and time: a 5000 × 5000 grid of 25·10⁶ cells
    const lines = ['freq_mhz,time_s,intensity'];
    for (let i = 0; i < 5000; i++) lines.push(`${1000 + i * 0.37},${i * 1.13},1`);
    const r = await hostile('sparse.csv', lines.join('\n'));
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.error.message).toContain(`at most ${MAX_GRID_CELLS}`);
  });

  it('a 1 MB run of digits, huge numbers and non-finite text in each column', async () => {
    const good = csvText(G, [...G.values.keys()], false)
      .trimEnd()
      .split('\n');
    for (const col of [0, 1, 2]) {
      for (const v of ['9'.repeat(1 << 20) + 'x', ...HUGE_NUMBERS, ...NON_FINITE_TEXT]) {
        const lines = [...good];
        const f = lines[3].split(',');
        f[col] = v;
        lines[3] = f.join(',');
        const r = await hostile('h.csv', lines.join('\n'));
        if (r.ok) expectSane(r.value.ds);
        else expect(locationOf(r.error).line ?? 4).toBe(4);
      }
    }
  });

  it('sidecars: deep nesting, huge axes, 10⁶ explicit frequencies, absurd steps', async () => {
    const { npy } = npyFiles(G);
    const path = write('s.npy', npy);
    const meta = `${path}.json`;
    for (const sidecar of [
      deepArrays(100_000),
      `{"source":"X","freqs_mhz":${deepArrays(100_000)},"times_s":{"start":0,"step":1}}`,
      `{"source":"X","freqs_mhz":[${new Array(1e6).fill(1).join(',')}],"times_s":{"start":0,"step":1}}`,
      '{"source":"X","freqs_mhz":{"start":1e308,"step":1e308},"times_s":{"start":0,"step":1}}',
      '{"source":"X","freqs_mhz":{"start":1400,"step":1},"times_s":{"start":0,"step":1e-320}}',
      '{"source":"X","freqs_mhz":{"start":1400,"step":NaN},"times_s":{"start":0,"step":1}}',
      '{"source":"X","freqs_mhz":{"start":-1400,"step":1},"times_s":{"start":0,"step":1}}',
      `{"source":"${'s'.repeat(1 << 20)}","mjd":"${'1'.repeat(1 << 20)}","freqs_mhz":{"start":1400,"step":1},"times_s":{"start":0,"step":1}}`,
      '{"source":"X","mjd":["60000"],"freqs_mhz":{"start":1400,"step":1},"times_s":{"start":0,"step":1}}',
    ]) {
      tried(FAMILY);
      write('s.npy.json', sidecar);
      const r = await outcome(meta, () => readDynspec(path));
      if (r.ok) expectSane(r.value.ds);
    }
  });

  it('empty, blank, BOM-only and header-only CSV files', async () => {
    for (const text of ['', '\n\n', '\uFEFF', 'freq_mhz,time_s,intensity\n', 'freq_mhz\n1\n']) {
      const r = await hostile('empty.csv', text);
      expect(r.ok).toBe(false);
    }
  });

  it('.npy: 3-D and 65-D arrays, too few channels, infinities', async () => {
    const side =
      '{"source":"X","freqs_mhz":{"start":1400,"step":1},"times_s":{"start":0,"step":1}}';
    for (const [shape, values] of [
      [[2, 8, 8], new Array(128).fill(1)],
      [[4, 8], new Array(32).fill(1)],
      [
        [8, 8],
        [...new Array(63).fill(1), Infinity],
      ],
      [[0, 8], []],
    ] as [number[], number[]][]) {
      tried(FAMILY);
      const path = write('a.npy', writeNpy(values, shape, '<f8'));
      write('a.npy.json', side);
      const e = await rejects(path, () => readDynspec(path));
      expect(locationOf(e).column).toMatch(/^(shape|data)/);
    }
  });
});
