// Profiles: JSON files (shared/profiles/input.ts), .npy arrays (shared/profiles/npy.ts) with
// their sidecars, read through cli/io/read-profiles.ts and cli/io/read-cube.ts. Valid files
// generated to the published .npy layout (numpy.lib.format / NEP 1: magic, version, header
// length, a dict literal padded with spaces and ended by '\n', the data) parse back to what was
// written; mutated and hostile bytes give a result or a bounded one-line InputError naming the
// file, and where a band, bin or key is at fault, that place.
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { readProfiles } from '../../cli/io/read-profiles.js';
import { readCube } from '../../cli/io/read-cube.js';
import { InputError } from '../../shared/formats/errors.js';
import { MIN_BINS, parseProfileJsonText } from '../../shared/profiles/input.js';
import { NPY_MAX_AXES, NPY_MAX_HEADER_BYTES, readNpy } from '../../shared/profiles/npy.js';
import type { ProfileSet } from '../../shared/profiles/types.js';
import {
  check,
  deepArrays,
  expectBoundedInputError,
  deepObjects,
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
} from './harness.js';

const JSON_FAMILY = 'profiles JSON';
const NPY_FAMILY = 'profiles .npy (+ sidecar) and cubes';
const { write } = scratch('profiles');

// ---------------------------------------------------------------------------------------------
// .npy files built to the published layout

type Descr = '<f4' | '<f8' | '>f4' | '>f8';
interface NpySpec {
  descr: Descr;
  shape: number[];
  /** values in C order */
  values: number[];
  fortran: boolean;
  version: 1 | 2 | 3;
  align: 1 | 16 | 64;
}

const pyShape = (s: number[]) => (s.length === 1 ? `(${s[0]},)` : `(${s.join(', ')})`);

function npyHeader(version: number, dict: string, align = 64): Uint8Array {
  const lenSize = version === 1 ? 2 : 4;
  const body = utf8(dict);
  const pad = (align - ((8 + lenSize + body.length + 1) % align)) % align;
  const header = new Uint8Array(body.length + pad + 1).fill(0x20);
  header.set(body);
  header[header.length - 1] = 0x0a;
  const pre = new Uint8Array(8 + lenSize);
  pre.set([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, version, 0]);
  const view = new DataView(pre.buffer);
  if (lenSize === 2) view.setUint16(8, header.length, true);
  else view.setUint32(8, header.length, true);
  const out = new Uint8Array(pre.length + header.length);
  out.set(pre);
  out.set(header, pre.length);
  return out;
}

/** Storage order index: C order as given, or Fortran (first axis fastest). */
function storageOrder(shape: number[], fortran: boolean): number[] {
  const n = shape.reduce((a, b) => a * b, 1);
  if (!fortran || shape.length < 2) return Array.from({ length: n }, (_, i) => i);
  const order: number[] = [];
  const strides = shape.map((_, k) => shape.slice(k + 1).reduce((a, b) => a * b, 1));
  const idx = new Array<number>(shape.length).fill(0);
  for (let i = 0; i < n; i++) {
    order.push(idx.reduce((s, v, k) => s + v * strides[k], 0));
    for (let k = 0; k < shape.length; k++) {
      if (++idx[k] < shape[k]) break;
      idx[k] = 0;
    }
  }
  return order;
}

function buildNpy(spec: NpySpec): Uint8Array {
  const dict = `{'descr': '${spec.descr}', 'fortran_order': ${spec.fortran ? 'True' : 'False'}, 'shape': ${pyShape(spec.shape)}, }`;
  const head = npyHeader(spec.version, dict, spec.align);
  const size = spec.descr.endsWith('8') ? 8 : 4;
  const little = spec.descr[0] === '<';
  const data = new DataView(new ArrayBuffer(spec.values.length * size));
  storageOrder(spec.shape, spec.fortran).forEach((ci, i) => {
    if (size === 8) data.setFloat64(i * size, spec.values[ci], little);
    else data.setFloat32(i * size, spec.values[ci], little);
  });
  const out = new Uint8Array(head.length + data.byteLength);
  out.set(head);
  out.set(new Uint8Array(data.buffer), head.length);
  return out;
}

const npySpecArb: fc.Arbitrary<NpySpec> = fc
  .record({
    descr: fc.constantFrom<Descr>('<f4', '<f8', '>f4', '>f8'),
    shape: fc.array(fc.integer({ min: 0, max: 5 }), { minLength: 0, maxLength: 4 }),
    fortran: fc.boolean(),
    version: fc.constantFrom<1 | 2 | 3>(1, 2, 3),
    align: fc.constantFrom<1 | 16 | 64>(1, 16, 64),
  })
  .chain((s) => {
    const n = s.shape.reduce((a, b) => a * b, 1);
    return fc
      .array(fc.double(), { minLength: n, maxLength: n })
      .map((values) => ({ ...s, values }));
  });

// ---------------------------------------------------------------------------------------------
// Profile sets: JSON, or .npy + sidecar

interface SetSpec {
  source: string;
  mjd: string;
  periodS: number;
  freqs: number[];
  /** [band][bin] */
  bins: number[][];
  noise?: number;
  dm?: number;
}

const setSpecArb: fc.Arbitrary<SetSpec> = fc
  .record({
    source: fc.stringMatching(/^[A-Z][A-Z0-9+-]{0,9}$/),
    mjd: fc
      .tuple(fc.integer({ min: 40000, max: 70000 }), fc.stringMatching(/^\d{1,15}$/))
      .map(([d, f]) => `${d}.${f}`),
    periodS: fc.double({ min: 1e-3, max: 10, noNaN: true }),
    freqs: fc.uniqueArray(fc.integer({ min: 100, max: 5000 }), { minLength: 1, maxLength: 4 }),
    nbin: fc.integer({ min: MIN_BINS, max: 64 }),
    noise: fc.option(fc.double({ min: 1e-3, max: 10, noNaN: true }), { nil: undefined }),
    dm: fc.option(fc.double({ min: 0, max: 1000, noNaN: true }), { nil: undefined }),
  })
  .chain(({ freqs, nbin, ...rest }) =>
    fc
      .array(
        fc
          .array(fc.double({ min: -1e3, max: 1e3, noNaN: true }), {
            minLength: nbin,
            maxLength: nbin,
          })
          .filter((b) => b.some((v) => v !== b[0])),
        { minLength: freqs.length, maxLength: freqs.length },
      )
      .map((bins) => ({ ...rest, freqs, bins })),
  );

function profileJson(s: SetSpec): string {
  return JSON.stringify({
    source: s.source,
    mjd: s.mjd,
    period_s: s.periodS,
    ...(s.dm === undefined ? {} : { dm: s.dm }),
    profiles: s.freqs.map((f, i) => ({
      freq_mhz: f,
      bins: s.bins[i],
      ...(s.noise === undefined ? {} : { noise: s.noise }),
    })),
  });
}

function sidecarJson(s: SetSpec): string {
  return JSON.stringify({
    source: s.source,
    mjd: s.mjd,
    period_s: s.periodS,
    freqs_mhz: s.freqs,
    ...(s.dm === undefined ? {} : { dm: s.dm }),
    ...(s.noise === undefined ? {} : { noise: s.noise }),
  });
}

function profileNpy(s: SetSpec, descr: Descr = '<f8'): Uint8Array {
  return buildNpy({
    descr,
    shape: [s.freqs.length, s.bins[0].length],
    values: s.bins.flat(),
    fortran: false,
    version: 1,
    align: 64,
  });
}

function expectSet(set: ProfileSet) {
  expect(set.bands.length).toBeGreaterThan(0);
  expect(set.periodS > 0 && Number.isFinite(set.periodS)).toBe(true);
  const nbin = set.bands[0].bins.length;
  for (const b of set.bands) {
    expect(b.freqMhz > 0 && Number.isFinite(b.freqMhz)).toBe(true);
    expect(b.bins.length).toBe(nbin);
    expect(b.bins.every(Number.isFinite)).toBe(true);
  }
}

describe('.npy: valid files', () => {
  it('every version, byte order, dtype, C or Fortran order and shape reads back in C order', async () => {
    await check(
      fc.property(npySpecArb, (spec) => {
        tried(NPY_FAMILY);
        const arr = readNpy(buildNpy(spec));
        expect(arr.shape).toEqual(spec.shape);
        const expected = spec.descr.endsWith('4') ? spec.values.map(Math.fround) : spec.values;
        expect(Array.from(arr.data)).toEqual(expected);
      }),
      150,
    );
  });
});

describe('.npy: mutated and hostile bytes', () => {
  it('mutations of valid arrays: an array or a bounded one-line InputError at the header or data', async () => {
    await check(
      fc.property(npySpecArb, mutationsArb, (spec, ms) => {
        tried(NPY_FAMILY);
        const bytes = mutateAll(buildNpy(spec), ms);
        try {
          const arr = readNpy(bytes);
          expect(arr.data.length).toBe(arr.shape.reduce((a, b) => a * b, 1));
        } catch (e) {
          const err = expectBoundedInputError(e);
          expect(['header', 'data']).toContain(err.location.column);
        }
      }),
      400,
    );
  });

  it('mutations of the header dict text itself (any character anywhere)', async () => {
    const dict = "{'descr': '<f8', 'fortran_order': False, 'shape': (2, 3), }";
    await check(
      fc.property(
        fc.nat({ max: dict.length }),
        fc.nat({ max: 3 }),
        fc.string({ unit: 'binary', maxLength: 6 }),
        (at, del, ins) => {
          tried(NPY_FAMILY);
          const text = dict.slice(0, at) + ins + dict.slice(at + del);
          const bytes = new Uint8Array([...npyHeader(3, text), ...new Uint8Array(48)]);
          try {
            readNpy(bytes);
          } catch (e) {
            expectBoundedInputError(e);
          }
        },
      ),
      300,
    );
  });

  const hostileNpy = (dict: string, version = 2, data = new Uint8Array(0)) => {
    tried(NPY_FAMILY);
    const bytes = new Uint8Array([...npyHeader(version, dict), ...data]);
    try {
      readNpy(bytes);
    } catch (e) {
      return expectBoundedInputError(e);
    }
    throw new Error('readNpy accepted a hostile header');
  };

  it(`more than ${NPY_MAX_AXES} axes, 10⁴ axes, huge dimensions, deep nesting, a long name`, () => {
    const d = (shape: string) => `{'descr': '<f8', 'fortran_order': False, 'shape': ${shape}}`;
    expect(hostileNpy(d(`(${new Array(65).fill(1).join(', ')})`)).message).toMatch(
      /65 axes; an array has at most 64/,
    );
    expect(hostileNpy(d(`(${new Array(10_000).fill(1).join(',')})`)).message).toMatch(/at most 64/);
    // 64 axes of 1: one value
    expect(() =>
      readNpy(
        new Uint8Array([
          ...npyHeader(1, d(`(${new Array(64).fill(1).join(', ')})`)),
          ...new Uint8Array(8),
        ]),
      ),
    ).not.toThrow();
    for (const shape of [
      '(1' + '0'.repeat(30) + ',)',
      `(${'9'.repeat(400)}, 2)`,
      '(4294967296, 4294967296, 4294967296)',
      `(${new Array(64).fill(2 ** 40).join(', ')})`,
      '(-1,)',
      '(1e3,)',
      '(1.5,)',
      "('3',)",
      '(None,)',
    ])
      expect(hostileNpy(d(shape)).message).toMatch(/truncated|shape/);
    hostileNpy(d('('.repeat(20_000) + ')'.repeat(20_000)));
    hostileNpy('{'.repeat(30_000));
    hostileNpy(`{'${'k'.repeat(60_000)}': 1}`);
    hostileNpy(`{'descr': '${'x'.repeat(60_000)}', 'fortran_order': False, 'shape': (1,)}`);
    hostileNpy(`{'descr': '<f8', 'fortran_order': ${'Q'.repeat(60_000)}}`);
  });

  it(`huge headers: over ${NPY_MAX_HEADER_BYTES} bytes present, or claimed by a short file`, () => {
    const big = `{'descr': '<f8', 'fortran_order': False, 'shape': (1,)}${' '.repeat(1 << 20)}`;
    expect(hostileNpy(big).message).toMatch(/at most 65536 bytes/);
    tried(NPY_FAMILY);
    const claim = new Uint8Array([
      0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, 2, 0, 0xff, 0xff, 0xff, 0xff,
    ]);
    expect(() => readNpy(claim)).toThrow(InputError);
  });
});

describe('profiles JSON and .npy through readProfiles: valid files', () => {
  it('a generated set reads back the same, as JSON and as .npy with a sidecar', async () => {
    await check(
      fc.asyncProperty(setSpecArb, fc.boolean(), async (spec, asNpy) => {
        tried(asNpy ? NPY_FAMILY : JSON_FAMILY);
        let set: ProfileSet;
        if (asNpy) {
          const path = write('valid.npy', profileNpy(spec));
          write('valid.npy.json', sidecarJson(spec));
          set = (await readProfiles(path)).set;
        } else {
          const path = write('valid.json', profileJson(spec));
          set = (await readProfiles(path)).set;
        }
        expect(set.source).toBe(spec.source);
        expect(set.mjd).toBe(spec.mjd);
        expect(set.periodS).toBe(spec.periodS);
        expect(set.bands.map((b) => b.freqMhz)).toEqual(spec.freqs);
        // JSON has no negative zero (JSON.stringify(-0) is "0"); .npy keeps it
        set.bands.forEach((b, i) =>
          expect(Array.from(b.bins)).toEqual(asNpy ? spec.bins[i] : spec.bins[i].map((v) => v + 0)),
        );
      }),
      60,
    );
  });
});

describe('profiles through readProfiles and readCube: mutated files', () => {
  it('mutated JSON profile files', async () => {
    await check(
      fc.asyncProperty(setSpecArb, mutationsArb, fc.boolean(), async (spec, ms, cube) => {
        tried(JSON_FAMILY);
        const name = 'mutated.json';
        const path = write(name, mutateAll(utf8(profileJson(spec)), ms));
        const r = await outcome<unknown>(path, () => (cube ? readCube(path) : readProfiles(path)));
        if (r.ok && !cube) expectSet((r.value as { set: ProfileSet }).set);
      }),
      200,
    );
  });

  it('mutated .npy arrays and mutated sidecars: the error names the file at fault', async () => {
    await check(
      fc.asyncProperty(
        setSpecArb,
        mutationsArb,
        fc.constantFrom('array', 'sidecar'),
        fc.constantFrom<Descr>('<f4', '<f8', '>f4', '>f8'),
        fc.boolean(),
        async (spec, ms, which, descr, cube) => {
          tried(NPY_FAMILY);
          let npy: Uint8Array = profileNpy(spec, descr);
          let side: Uint8Array = utf8(sidecarJson(spec));
          if (which === 'array') npy = mutateAll(npy, ms);
          else side = mutateAll(side, ms);
          const path = write('m.npy', npy);
          const meta = write('m.npy.json', side);
          try {
            const r = cube ? await readCube(path) : await readProfiles(path);
            if (!cube) expectSet((r as { set: ProfileSet }).set);
          } catch (e) {
            // one of the two files, named in full; the sidecar only for sidecar problems
            const file = e instanceof InputError ? e.location.file : undefined;
            expect(file === path || file === meta, String(e)).toBe(true);
            await outcome(file!, () => {
              throw e;
            });
            if (which === 'sidecar' && file === path) {
              // a sidecar change can only make the array disagree with it (shape, data)
              expect(locationOf(e as InputError).column ?? '').toMatch(/^(shape|data)/);
            }
          }
        },
      ),
      200,
    );
  });

  it('truncation at every byte of a small JSON profile file', async () => {
    const spec: SetSpec = {
      source: 'SBP-A',
      mjd: '60000.5',
      periodS: 0.005,
      freqs: [1400],
      bins: [Array.from({ length: 16 }, (_, i) => (i === 8 ? 10 : 0))],
      noise: 1,
    };
    const bytes = utf8(profileJson(spec));
    for (let cut = 0; cut <= bytes.length; cut++) {
      tried(JSON_FAMILY);
      const path = write('cut.json', bytes.subarray(0, cut));
      const r = await outcome(path, () => readProfiles(path));
      if (r.ok) expectSet(r.value.set);
    }
  });
});

describe('profiles: a bad value names the band and bin, or the key', () => {
  it('a non-finite or non-number bin anywhere', async () => {
    await check(
      fc.asyncProperty(
        setSpecArb,
        fc.nat(),
        fc.nat(),
        fc.constantFrom('NaN', 'Infinity', '-Infinity', '"x"', 'null', '[1]', '{}', 'true'),
        async (spec, bandPick, binPick, token) => {
          tried(JSON_FAMILY);
          const band = bandPick % spec.freqs.length;
          const bin = binPick % spec.bins[band].length;
          const value = JSON.parse(profileJson(spec));
          value.profiles[band].bins[bin] = '__HERE__';
          const text = JSON.stringify(value).replace('"__HERE__"', token);
          const name = 'bad-bin.json';
          const path = write(name, text);
          const e = await rejects(path, () => readProfiles(path));
          expect(locationOf(e)).toMatchObject({
            row: band + 1,
            column: `profiles[${band}].bins[${bin}]`,
          });
        },
      ),
      60,
    );
  });

  it('a syntax error names its line (JSON profiles and sidecars)', async () => {
    const text =
      '{\n  "source": "X",\n  "mjd": "60000.5",\n  "period_s": 0.005,,\n  "profiles": []\n}';
    const syntax = write('syntax.json', text);
    const e = await rejects(syntax, () => readProfiles(syntax));
    expect(locationOf(e).line).toBe(4);
    const path = write('s.npy', profileNpy({ ...SMALL }));
    const meta = write('s.npy.json', '{"source": "X",\n"mjd": }');
    const e2 = await rejects(meta, () => readProfiles(path));
    expect(locationOf(e2).line).toBe(2);
  });
});

const SMALL: SetSpec = {
  source: 'SBP-A',
  mjd: '60000.5',
  periodS: 0.005,
  freqs: [1400, 700],
  bins: [
    Array.from({ length: 16 }, (_, i) => (i === 8 ? 10 : 0)),
    Array.from({ length: 16 }, (_, i) => (i === 9 ? 10 : 1)),
  ],
};

describe('profiles: hostile inputs', () => {
  const hostile = async (name: string, text: string | Uint8Array, family = JSON_FAMILY) => {
    tried(family);
    const path = write(name, text);
    return outcome(path, () => readProfiles(path));
  };

  it('deep nesting: 10⁵ nested arrays as the file, as the bins, as a bin and as a key value', async () => {
    const deep = deepArrays(100_000);
    expect((await hostile('deep.json', deep)).ok).toBe(false);
    expect((await hostile('deep-o.json', deepObjects(100_000))).ok).toBe(false);
    const base = JSON.parse(profileJson(SMALL));
    for (const [where, patch] of [
      ['bins', (v: typeof base) => (v.profiles[0].bins = '__D__')],
      ['bin', (v: typeof base) => (v.profiles[0].bins[3] = '__D__')],
      ['source', (v: typeof base) => (v.source = '__D__')],
      ['mjd', (v: typeof base) => (v.mjd = '__D__')],
      ['period', (v: typeof base) => (v.period_s = '__D__')],
      ['profiles', (v: typeof base) => (v.profiles = '__D__')],
    ] as const) {
      const v = JSON.parse(JSON.stringify(base));
      patch(v);
      const r = await hostile(`deep-${where}.json`, JSON.stringify(v).replace('"__D__"', deep));
      expect(r.ok).toBe(false);
    }
    // the sidecar of an array
    const path = write('deep.npy', profileNpy(SMALL));
    write('deep.npy.json', `{"source":"X","mjd":"60000.5","period_s":0.1,"freqs_mhz":${deep}}`);
    tried(NPY_FAMILY);
    const r = await outcome(`${path}.json`, () => readProfiles(path));
    expect(r.ok).toBe(false);
  });

  it('huge numbers and non-finite text as the period, a frequency, the noise and a bin', async () => {
    for (const v of [
      ...HUGE_NUMBERS,
      ...NON_FINITE_TEXT.filter((t) => /^-?(NaN|Infinity)$/.test(t)),
    ]) {
      for (const key of ['period_s', 'freq', 'noise', 'bin', 'mjd']) {
        const o = JSON.parse(profileJson(SMALL));
        if (key === 'period_s') o.period_s = '__V__';
        if (key === 'freq') o.profiles[1].freq_mhz = '__V__';
        if (key === 'noise') o.profiles[0].noise = '__V__';
        if (key === 'bin') o.profiles[1].bins[5] = '__V__';
        if (key === 'mjd') o.mjd = '__V__';
        const r = await hostile('huge.json', JSON.stringify(o).replace('"__V__"', v));
        if (r.ok) {
          expectSet(r.value.set);
          expect(Number.isFinite(Number(v))).toBe(true);
        }
      }
    }
  });

  it('a 10⁶-bin profile, a 4 MB source name, 10⁴ bands, NUL bytes, BOMs', async () => {
    const o = JSON.parse(profileJson(SMALL));
    o.profiles = [{ freq_mhz: 1400, bins: Array.from({ length: 1e6 }, (_, i) => i % 7) }];
    const r1 = await hostile('wide.json', JSON.stringify(o));
    expect(r1.ok).toBe(true);
    o.source = 's'.repeat(4 << 20);
    o.profiles = SMALL.freqs.map((f, i) => ({ freq_mhz: f, bins: SMALL.bins[i] }));
    const r2 = await hostile('long-name.json', JSON.stringify(o));
    if (r2.ok) expect(r2.value.set.source).toHaveLength(4 << 20);
    o.source = 'X';
    o.profiles = Array.from({ length: 10_000 }, (_, i) => ({
      freq_mhz: 100 + i,
      bins: SMALL.bins[0],
    }));
    expect((await hostile('many-bands.json', JSON.stringify(o))).ok).toBe(true);
    expect((await hostile('nul.json', new Uint8Array(1 << 16))).ok).toBe(false);
    expect((await hostile('bom.json', `\uFEFF${profileJson(SMALL)}`)).ok).toBe(true);
    expect((await hostile('bom2.json', `\uFEFF\uFEFF${profileJson(SMALL)}`)).ok).toBe(false);
    expect((await hostile('empty.json', '')).ok).toBe(false);
  });
});

describe('shared/profiles/input.ts on arbitrary JSON values', () => {
  it('parseProfileJsonText: any JSON document gives a set or a bounded one-line InputError', async () => {
    await check(
      fc.property(fc.jsonValue({ maxDepth: 4 }), (v) => {
        tried(JSON_FAMILY);
        try {
          expectSet(parseProfileJsonText(JSON.stringify(v)));
        } catch (e) {
          expectBoundedInputError(e);
        }
      }),
      300,
    );
  });
});
