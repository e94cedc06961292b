import { createHash } from 'node:crypto';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readProfiles } from '../../cli/io/read-profiles.js';
import { InputError } from '../../shared/formats/errors.js';
import {
  checkProfileSet,
  parseProfileJson,
  parseProfileJsonText,
  profilesFromNpy,
  SidecarError,
} from '../../shared/profiles/input.js';
import type { NpyArray } from '../../shared/profiles/npy.js';
import type { ProfileSet } from '../../shared/profiles/types.js';
import { tempDir } from '../helpers/cli.js';

const NBIN = 32;

/** A smooth pulse: a Gaussian bump at phase 0.3 on a flat floor. */
function pulse(scale = 1): number[] {
  return Array.from(
    { length: NBIN },
    (_, i) => 0.1 + scale * Math.exp(-0.5 * ((i / NBIN - 0.3) / 0.04) ** 2),
  );
}

function jsonProfile(overrides: Record<string, unknown> = {}) {
  return {
    source: 'TEST-1',
    mjd: '60321.123456789012345',
    period_s: 0.00457,
    dm: 21.3,
    profiles: [
      { freq_mhz: 800, bins: pulse(1), noise: 0.01 },
      { freq_mhz: 1400, bins: pulse(0.7) },
      { freq_mhz: 2200, bins: pulse(0.4) },
    ],
    ...overrides,
  };
}

/** A little-endian, C-order .npy file (version 1.0, 64-byte preamble) of the given values. */
function npyFile(descr: '<f8' | '<i8', shape: number[], values: number[]): Uint8Array {
  const dict = `{'descr': '${descr}', 'fortran_order': False, 'shape': (${shape.join(', ')}${shape.length === 1 ? ',' : ''}), }`;
  const headerLen = Math.ceil((10 + dict.length + 1) / 64) * 64 - 10;
  const out = new Uint8Array(10 + headerLen + values.length * 8);
  out.set([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, 1, 0]);
  const view = new DataView(out.buffer);
  view.setUint16(8, headerLen, true);
  out.fill(0x20, 10, 10 + headerLen);
  out.set(new TextEncoder().encode(dict), 10);
  out[10 + headerLen - 1] = 0x0a;
  values.forEach((v, i) => view.setFloat64(10 + headerLen + 8 * i, v, true));
  return out;
}

const cube = (rows: number[][]) => rows.flat();
const sidecar = (overrides: Record<string, unknown> = {}) => ({
  source: 'TEST-1',
  mjd: 60321.5,
  period_s: 0.00457,
  freqs_mhz: [800, 1400, 2200],
  ...overrides,
});

const array = (rows: number[][]): NpyArray => ({
  shape: [rows.length, rows[0].length],
  descr: '<f8',
  fortranOrder: false,
  data: Float64Array.from(rows.flat()),
});

/** Run `f`, return the InputError it throws. */
function thrown(f: () => unknown): InputError {
  try {
    f();
  } catch (e) {
    expect(e).toBeInstanceOf(InputError);
    return e as InputError;
  }
  throw new Error('no error thrown');
}

describe('parseProfileJson: the JSON layout', () => {
  it('a valid file becomes a ProfileSet; mjd stays exact decimal text', () => {
    const set = parseProfileJson(jsonProfile());
    expect(set.source).toBe('TEST-1');
    expect(set.mjd).toBe('60321.123456789012345');
    expect(set.periodS).toBe(0.00457);
    expect(set.dm).toBe(21.3);
    expect(set.bands.map((b) => b.freqMhz)).toEqual([800, 1400, 2200]);
    expect(set.bands[0].noise).toBe(0.01);
    expect(set.bands[1].noise).toBeUndefined();
    expect(set.bands[2].bins).toBeInstanceOf(Float64Array);
    expect(Array.from(set.bands[2].bins)).toEqual(pulse(0.4));
  });

  it('a bare numeric mjd in the text keeps all its digits', () => {
    const text = JSON.stringify(jsonProfile()).replace(
      '"mjd":"60321.123456789012345"',
      '"mjd": 60321.123456789012345',
    );
    expect(text).toContain('"mjd": 60321.123456789012345,');
    expect(parseProfileJsonText(text).mjd).toBe('60321.123456789012345');
    expect(parseProfileJson(jsonProfile({ mjd: 60321.25 })).mjd).toBe('60321.25');
  });

  it('type errors name the JSON path, and the band as the row', () => {
    const bad = jsonProfile();
    (bad.profiles[2].bins as unknown[])[17] = 'abc';
    expect(thrown(() => parseProfileJson(bad)).message).toBe(
      'row 3: column "profiles[2].bins[17]": expected a number, found "abc"',
    );
    const noFreq = jsonProfile();
    delete (noFreq.profiles[1] as Partial<(typeof noFreq.profiles)[1]>).freq_mhz;
    expect(thrown(() => parseProfileJson(noFreq)).message).toBe(
      'row 2: column "profiles[1].freq_mhz": missing "freq_mhz"',
    );
    const noPeriod: Record<string, unknown> = jsonProfile();
    delete noPeriod.period_s;
    expect(thrown(() => parseProfileJson(noPeriod)).message).toBe(
      'column "period_s": missing "period_s" (required: source, mjd, period_s, profiles)',
    );
    expect(thrown(() => parseProfileJson(jsonProfile({ period_s: '4.5 ms' }))).message).toBe(
      'column "period_s": expected a number, found "4.5 ms"',
    );
    expect(thrown(() => parseProfileJson([jsonProfile()])).message).toBe(
      'a profile file must hold one JSON object { source, mjd, period_s, profiles }, found an array',
    );
    expect(thrown(() => parseProfileJson(jsonProfile({ mjd: 'yesterday' }))).message).toBe(
      'column "mjd": "yesterday" is not a decimal MJD (digits, optional point and fraction)',
    );
  });

  it('period ≤ 0 or not finite', () => {
    for (const [period, shown] of [
      [0, '0'],
      [-0.004, '-0.004'],
      ['NaN', 'NaN'],
    ] as const) {
      expect(thrown(() => parseProfileJson(jsonProfile({ period_s: period }))).message).toBe(
        `column "period_s": the period must be a positive number of seconds, found ${shown}`,
      );
    }
  });

  it('NaN and infinite bins (as Python json writes them) name the band and the bin', () => {
    const text = JSON.stringify(jsonProfile()).replace(
      /("bins":\[(?:[^,\]]+,){17})[^,\]]+/,
      '$1NaN',
    );
    expect(text).toContain(',NaN,');
    expect(thrown(() => parseProfileJsonText(text)).message).toBe(
      'row 1: column "profiles[0].bins[17]": the 800 MHz band has NaN in bin 17',
    );
    const inf = jsonProfile();
    inf.profiles[1].bins[3] = Infinity; // as parsed from -Infinity/Infinity text
    expect(thrown(() => parseProfileJson(inf)).message).toBe(
      'row 2: column "profiles[1].bins[3]": the 1400 MHz band has Infinity in bin 3',
    );
    // a string "NaN" inside a string value is left alone
    expect(
      parseProfileJsonText(JSON.stringify(jsonProfile({ source: 'NaN Infinity' }))).source,
    ).toBe('NaN Infinity');
  });

  it('an all-zero or constant profile has no signal', () => {
    const zero = jsonProfile();
    zero.profiles[1].bins = new Array(NBIN).fill(0);
    expect(thrown(() => parseProfileJson(zero)).message).toBe(
      'row 2: column "profiles[1].bins": the 1400 MHz band has no signal: every bin is equal (0)',
    );
    const flat = jsonProfile();
    flat.profiles[2].bins = new Array(NBIN).fill(3.5);
    expect(thrown(() => parseProfileJson(flat)).message).toBe(
      'row 3: column "profiles[2].bins": the 2200 MHz band has no signal: every bin is equal (3.5)',
    );
  });

  it('frequencies, bin counts, noise and DM', () => {
    const check = (mutate: (p: ReturnType<typeof jsonProfile>) => void) => {
      const p = jsonProfile();
      mutate(p);
      return thrown(() => parseProfileJson(p)).message;
    };
    expect(check((p) => (p.profiles[2].freq_mhz = 800))).toBe(
      'row 3: column "profiles[2].freq_mhz": frequency 800 MHz appears twice (bands 1 and 3); each band needs its own frequency',
    );
    expect(check((p) => (p.profiles[1].freq_mhz = -1400))).toBe(
      'row 2: column "profiles[1].freq_mhz": the frequency must be a positive number of MHz, found -1400',
    );
    expect(check((p) => (p.profiles[0].bins = pulse().slice(0, 8)))).toBe(
      'row 1: column "profiles[0].bins": the 800 MHz band has 8 bins; a profile needs at least 16',
    );
    expect(check((p) => (p.profiles[2].bins = [...pulse(), ...pulse()]))).toBe(
      'row 3: column "profiles[2].bins": the 2200 MHz band has 64 bins but the first band has 32; every band needs the same number of bins',
    );
    expect(check((p) => (p.profiles[0].noise = 0))).toBe(
      'row 1: column "profiles[0].noise": the noise of the 800 MHz band must be a positive number, found 0',
    );
    expect(check((p) => (p.dm = -2))).toBe(
      'column "dm": the DM must be a finite number ≥ 0, found -2',
    );
    expect(check((p) => (p.profiles = []))).toBe('column "profiles": there are no bands');
  });

  it('checkProfileSet is the same check for sets built elsewhere', () => {
    const set: ProfileSet = parseProfileJson(jsonProfile());
    set.periodS = Infinity;
    expect(thrown(() => checkProfileSet(set)).message).toBe(
      'column "period_s": the period must be a positive number of seconds, found Infinity',
    );
  });
});

describe('profilesFromNpy: an array [nchan, nbin] and its sidecar', () => {
  const rows = [pulse(1), pulse(0.7), pulse(0.4)];

  it('channels become bands in order, with scalar or per-channel noise', () => {
    const set = profilesFromNpy(array(rows), sidecar({ dm: 12, noise: 0.02 }));
    expect(set.mjd).toBe('60321.5');
    expect(set.dm).toBe(12);
    expect(set.bands.map((b) => [b.freqMhz, b.noise])).toEqual([
      [800, 0.02],
      [1400, 0.02],
      [2200, 0.02],
    ]);
    expect(Array.from(set.bands[1].bins)).toEqual(rows[1]);
    const per = profilesFromNpy(array(rows), sidecar({ noise: [0.1, 0.2, 0.3] }));
    expect(per.bands.map((b) => b.noise)).toEqual([0.1, 0.2, 0.3]);
  });

  it('a 1-D array is one band; other dimensions are refused', () => {
    const one: NpyArray = { ...array([rows[0]]), shape: [NBIN] };
    expect(profilesFromNpy(one, sidecar({ freqs_mhz: [1400] })).bands).toHaveLength(1);
    const three: NpyArray = { ...array(rows), shape: [3, 2, 16] };
    const e = thrown(() => profilesFromNpy(three, sidecar()));
    expect(e).not.toBeInstanceOf(SidecarError);
    expect(e.message).toBe(
      'column "shape": a profile array must be 2-D [nchan, nbin] (or 1-D for one band); this one has shape (3, 2, 16)',
    );
  });

  it('shape/sidecar mismatch names both numbers and blames the sidecar', () => {
    const e = thrown(() => profilesFromNpy(array([...rows, pulse(0.2)]), sidecar()));
    expect(e).toBeInstanceOf(SidecarError);
    expect(e.message).toBe(
      'column "freqs_mhz": the sidecar lists 3 frequencies (freqs_mhz) but the array has 4 channels (shape (4, 32))',
    );
    const n = thrown(() => profilesFromNpy(array(rows), sidecar({ noise: [1, 2] })));
    expect(n.message).toBe(
      'column "noise": the sidecar lists 2 noise values but the array has 3 channels (shape (3, 32)); give one number or one per channel',
    );
  });

  it('array problems point at the array index; sidecar problems at the sidecar key', () => {
    const nan = rows.map((r) => [...r]);
    nan[2][5] = NaN;
    const e = thrown(() => profilesFromNpy(array(nan), sidecar()));
    expect(e).not.toBeInstanceOf(SidecarError);
    expect(e.message).toBe('row 3: column "data[2, 5]": the 2200 MHz band has NaN in bin 5');
    const dup = thrown(() =>
      profilesFromNpy(array(rows), sidecar({ freqs_mhz: [800, 1400, 800] })),
    );
    expect(dup).toBeInstanceOf(SidecarError);
    expect(dup.message).toBe(
      'row 3: column "freqs_mhz[2]": frequency 800 MHz appears twice (bands 1 and 3); each band needs its own frequency',
    );
    const missing = thrown(() => profilesFromNpy(array(rows), { source: 'TEST-1' }));
    expect(missing).toBeInstanceOf(SidecarError);
    expect(missing.message).toBe(
      'column "mjd": missing "mjd" (required: source, mjd, period_s, freqs_mhz)',
    );
    const noise = thrown(() => profilesFromNpy(array(rows), sidecar({ noise: [1, -1, 1] })));
    expect(noise.message).toBe(
      'row 2: column "noise[1]": the noise of the 1400 MHz band must be a positive number, found -1',
    );
  });
});

describe('readProfiles: files on disk, with their SHA-256', () => {
  let dir = '';
  let cleanup = () => {};
  beforeAll(() => ({ dir, cleanup } = tempDir('sightline-profiles-')));
  afterAll(() => cleanup());

  const write = (name: string, content: string | Uint8Array) => {
    const path = join(dir, name);
    writeFileSync(path, content);
    return path;
  };
  const sha = (content: string | Uint8Array) => createHash('sha256').update(content).digest('hex');
  const rejection = async (p: Promise<unknown>) => {
    const e = await p.then(
      () => undefined,
      (err: unknown) => err,
    );
    expect(e).toBeInstanceOf(InputError);
    return (e as InputError).message;
  };

  it('JSON: the set, and the file with its hash and number of bands', async () => {
    const text = JSON.stringify(jsonProfile(), null, 1);
    const path = write('visit.json', text);
    const { set, input } = await readProfiles(path);
    expect(set.bands).toHaveLength(3);
    expect(input).toEqual([{ path, sha256: sha(text), rows: 3 }]);
  });

  it('.npy with the default sidecar PATH.json; both files are listed', async () => {
    const bytes = npyFile('<f8', [3, NBIN], cube([pulse(1), pulse(0.7), pulse(0.4)]));
    const path = write('cube.npy', bytes);
    const metaText = JSON.stringify(sidecar());
    const metaPath = write('cube.npy.json', metaText);
    const { set, input } = await readProfiles(path);
    expect(set.bands.map((b) => b.freqMhz)).toEqual([800, 1400, 2200]);
    expect(input).toEqual([
      { path, sha256: sha(bytes), rows: 3 },
      { path: metaPath, sha256: sha(metaText), rows: 3 },
    ]);
  });

  it('--meta: a sidecar elsewhere', async () => {
    const path = write('other.npy', npyFile('<f8', [NBIN], pulse()));
    const metaPath = write('other-meta.json', JSON.stringify(sidecar({ freqs_mhz: [1400] })));
    const { input } = await readProfiles(path, metaPath);
    expect(input.map((i) => [i.path, i.rows])).toEqual([
      [path, 1],
      [metaPath, 1],
    ]);
  });

  it('wrong dtype', async () => {
    const path = write('ints.npy', npyFile('<i8', [3, NBIN], new Array(3 * NBIN).fill(1)));
    write('ints.npy.json', JSON.stringify(sidecar()));
    expect(await rejection(readProfiles(path))).toBe(
      `${path}: column "header": unsupported dtype '<i8' (signed integers); Sightline reads float32 or float64 arrays (<f4, <f8, >f4, >f8)`,
    );
  });

  it('truncated .npy', async () => {
    const whole = npyFile('<f8', [3, NBIN], cube([pulse(1), pulse(0.7), pulse(0.4)]));
    const path = write('short.npy', whole.subarray(0, whole.length - 100));
    write('short.npy.json', JSON.stringify(sidecar()));
    expect(await rejection(readProfiles(path))).toBe(
      `${path}: column "data": truncated data: shape (3, 32) of <f8 needs 768 bytes after the header, but only 668 are present`,
    );
  });

  it('shape/sidecar mismatch is reported against the sidecar', async () => {
    const path = write('four.npy', npyFile('<f8', [4, NBIN], cube([1, 0.7, 0.4, 0.2].map(pulse))));
    const metaPath = write('four.npy.json', JSON.stringify(sidecar()));
    expect(await rejection(readProfiles(path))).toBe(
      `${metaPath}: column "freqs_mhz": the sidecar lists 3 frequencies (freqs_mhz) but the array has 4 channels (shape (4, 32))`,
    );
  });

  it('all-zero profile', async () => {
    const path = write(
      'zero.npy',
      npyFile('<f8', [3, NBIN], cube([pulse(1), new Array(NBIN).fill(0), pulse(0.4)])),
    );
    write('zero.npy.json', JSON.stringify(sidecar()));
    expect(await rejection(readProfiles(path))).toBe(
      `${path}: row 2: column "data[1]": the 1400 MHz band has no signal: every bin is equal (0)`,
    );
    const json = jsonProfile();
    json.profiles[0].bins = new Array(NBIN).fill(0);
    const jpath = write('zero.json', JSON.stringify(json));
    expect(await rejection(readProfiles(jpath))).toBe(
      `${jpath}: row 1: column "profiles[0].bins": the 800 MHz band has no signal: every bin is equal (0)`,
    );
  });

  it('NaN bins', async () => {
    const rows = [pulse(1), pulse(0.7), pulse(0.4)];
    rows[1][17] = NaN;
    const path = write('nan.npy', npyFile('<f8', [3, NBIN], cube(rows)));
    write('nan.npy.json', JSON.stringify(sidecar()));
    expect(await rejection(readProfiles(path))).toBe(
      `${path}: row 2: column "data[1, 17]": the 1400 MHz band has NaN in bin 17`,
    );
    const text = JSON.stringify(jsonProfile()).replace(/"bins":\[[^,]+/, '"bins":[-Infinity');
    expect(text).toContain('"bins":[-Infinity,');
    const jpath = write('nan.json', text);
    expect(await rejection(readProfiles(jpath))).toBe(
      `${jpath}: row 1: column "profiles[0].bins[0]": the 800 MHz band has -Infinity in bin 0`,
    );
  });

  it('period ≤ 0', async () => {
    const path = write('period.npy', npyFile('<f8', [3, NBIN], cube([1, 0.7, 0.4].map(pulse))));
    const metaPath = write('period.npy.json', JSON.stringify(sidecar({ period_s: 0 })));
    expect(await rejection(readProfiles(path))).toBe(
      `${metaPath}: column "period_s": the period must be a positive number of seconds, found 0`,
    );
    const jpath = write('period.json', JSON.stringify(jsonProfile({ period_s: -0.00457 })));
    expect(await rejection(readProfiles(jpath))).toBe(
      `${jpath}: column "period_s": the period must be a positive number of seconds, found -0.00457`,
    );
  });

  it('missing sidecar says where it looked; a broken one names its own file and line', async () => {
    const path = write('alone.npy', npyFile('<f8', [NBIN], pulse()));
    expect(await rejection(readProfiles(path))).toBe(
      `${path}: no sidecar JSON for this array: looked for ${path}.json (give another with --meta FILE)`,
    );
    const metaPath = write('broken.json', '{\n  "source": "TEST-1",\n  "mjd": 60321.5,,\n}');
    const message = await rejection(readProfiles(path, metaPath));
    expect(message).toBe(
      `${metaPath}: line 3: not valid JSON at character 18 (expected a property name in double quotes, found ',')`,
    );
    // an "Unexpected token" error, for which JSON.parse gives no position, gets a line too
    const tokenPath = write('token.json', '{\n  "source": "TEST-1",\n  "mjd": }\n');
    expect(await rejection(readProfiles(tokenPath))).toBe(
      `${tokenPath}: line 3: not valid JSON at character 10 (expected a value, found '}')`,
    );
  });

  it('missing files are I/O errors (ENOENT), not invalid input', async () => {
    await expect(readProfiles(join(dir, 'nowhere.json'))).rejects.toMatchObject({ code: 'ENOENT' });
    const path = write('lonely.npy', npyFile('<f8', [NBIN], pulse()));
    await expect(readProfiles(path, join(dir, 'no-meta.json'))).rejects.toMatchObject({
      code: 'ENOENT',
    });
  });
});
