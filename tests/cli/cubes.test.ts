import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { writeNpy } from '../../shared/profiles/npy-write.js';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { dmFitResultSchema } from '../../shared/schemas/dm-fit.js';
import { dmRefineResultSchema } from '../../shared/schemas/dm-refine.js';
import { dmSeriesResultSchema } from '../../shared/schemas/dm-series.js';
import { simulateCube, simulateTemplate, type CubeSimSpec } from '../../shared/sim/cubes.js';
import { createRng } from '../../shared/sim/random.js';
import { sightline, tempDir } from '../helpers/cli.js';

const K = dispersionConstant('conventional');
const { dir, cleanup } = tempDir('sightline-cubes-');
afterAll(cleanup);

const NBIN = 256;
const COMPS = [
  { weight: 1, offset: 0, width: 0.012 },
  { weight: 0.35, offset: 0.045, width: 0.015 },
];
const FREQS = [
  ...Array.from({ length: 16 }, (_, c) => 550 + (c + 0.5) * 21.875),
  ...Array.from({ length: 16 }, (_, c) => 1150 + (c + 0.5) * 37.5),
];

/** Write a simulated cube as .npy + sidecar (the pipeline layout); returns its path. */
function writeCube(name: string, over: Partial<CubeSimSpec>, seed: number): string {
  const spec: CubeSimSpec = {
    source: 'SBP-C',
    mjd: '60512.318750',
    periodS: 0.00193,
    nbin: NBIN,
    freqsMhz: FREQS,
    dmApplied: 47.12,
    dmTrue: 47.12,
    refFreqMhz: null,
    k: K.value,
    phase: 0.3,
    components: COMPS,
    amplitude: (f) => 6 * (f / 1000) ** -1.6,
    noise: 1,
    ...over,
  };
  const { set } = simulateCube(spec, createRng(seed));
  const data = new Float64Array(set.bands.length * NBIN);
  set.bands.forEach((b, c) => data.set(b.bins, c * NBIN));
  const path = join(dir, `${name}.npy`);
  writeFileSync(path, writeNpy(data, [set.bands.length, NBIN], '<f8'));
  writeFileSync(
    `${path}.json`,
    JSON.stringify({
      source: set.source,
      mjd: set.mjd,
      period_s: set.periodS,
      dm: set.dm,
      freqs_mhz: set.bands.map((b) => b.freqMhz),
    }),
  );
  return path;
}

function writeTemplate(name: string, nbin = NBIN): string {
  const path = join(dir, name);
  writeFileSync(
    path,
    JSON.stringify({
      source: 'SBP-C',
      mjd: '60000',
      period_s: 0.00193,
      fiducial_phase: 0.5,
      profiles: [
        {
          freq_mhz: 1000,
          bins: Array.from(simulateTemplate({ nbin, components: COMPS }, 0.5)),
        },
      ],
    }),
  );
  return path;
}

const TRUE_DM = 47.1234;
const cube = writeCube('visit', { dmTrue: TRUE_DM, flagged: [3, 20] }, 1);
const template = writeTemplate('sbp-c.template.json');

describe('cube → arrival times → DM (end to end through the CLI)', () => {
  it('toas extract writes the arrival-time CSV and dm fit recovers the injected DM', () => {
    const out = join(dir, 'toas.csv');
    const r = sightline(['toas', 'extract', cube, '--template', template, '--out', out]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toBe('');
    expect(r.stderr).toMatch(/of 32 channels give arrival times \(\d+ below S\/N 8, 2 flagged\)/);
    const lines = readFileSync(out, 'utf8').trim().split('\n');
    expect(lines[0]).toBe('source,mjd,freq_mhz,err_us,snr,receiver,pulse,channel');
    expect(lines.length).toBeGreaterThan(20);
    // the channels flagged in the file (3 and 20, 0-based) give no arrival time
    const channels = lines.slice(1).map((l) => Number(l.split(',')[7]));
    expect(channels).not.toContain(4);
    expect(channels).not.toContain(21);

    const fit = sightline(['dm', 'fit', out, '--json']);
    expect(fit.code, fit.stderr).toBe(0);
    const v = dmFitResultSchema.parse(JSON.parse(fit.stdout)).visits[0];
    expect(v.status).toBe('fitted');
    expect(v.dm_kind).toBe('absolute');
    // within 3σ of the injected DM (one seeded cube; the calibration suite checks the 1σ rate)
    expect(Math.abs(v.dm! - TRUE_DM)).toBeLessThan(3 * v.dm_err_scaled!);
    expect(v.dm_err!).toBeLessThan(1e-3);
  });

  it('--json writes the same rows as a JSON array that dm fit reads too', () => {
    const r = sightline(['toas', 'extract', cube, '--template', template, '--json', '--quiet']);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toBe('');
    const rows = JSON.parse(r.stdout) as Array<Record<string, unknown>>;
    expect(Object.keys(rows[0])).toEqual([
      'source',
      'mjd',
      'freq_mhz',
      'err_us',
      'snr',
      'receiver',
      'pulse',
      'channel',
    ]);
    const path = join(dir, 'toas.json');
    writeFileSync(path, r.stdout);
    expect(sightline(['dm', 'fit', path, '--quiet']).code).toBe(0);
  });

  it('dm refine: S/N curve, refined DM, DM from arrival times, dedispersed profile', () => {
    const profileOut = join(dir, 'summed.json');
    const r = sightline([
      'dm',
      'refine',
      cube,
      '--range',
      '47.10:47.14:0.0005',
      '--template',
      template,
      '--json',
      '--profile-out',
      profileOut,
    ]);
    expect(r.code, r.stderr).toBe(0);
    const res = dmRefineResultSchema.parse(JSON.parse(r.stdout));
    expect(res.schema).toBe('sightline/dm-refine@1');
    expect(res.curve.length).toBe(81);
    expect(res.n_flagged).toBe(2);
    expect(res.dm_applied).toBe(47.12);
    expect(Math.abs(res.best.dm - TRUE_DM)).toBeLessThan(3 * res.best.dm_err!);
    expect(Math.abs(res.from_toas.dm! - TRUE_DM)).toBeLessThan(3 * res.from_toas.dm_err_scaled!);
    expect(res.at_edge).toBe(false);
    // the curve's maximum sits beside the refined DM
    const top = res.curve.reduce((a, b) => (b.snr > a.snr ? b : a));
    expect(Math.abs(top.dm - res.best.dm)).toBeLessThanOrEqual(0.0005);
    expect(res.best.snr).toBeGreaterThanOrEqual(top.snr);
    // the dedispersed profile is a profile file other commands read
    const prof = JSON.parse(readFileSync(profileOut, 'utf8'));
    expect(prof.profiles).toHaveLength(1);
    expect(prof.profiles[0].bins).toHaveLength(NBIN);
    expect(prof.dm).toBeCloseTo(res.best.dm, 9);
    const again = sightline(['toas', 'extract', cube, '--template', profileOut, '--quiet']);
    expect(again.code, again.stderr).toBe(0);
  });

  it('dm refine --format csv writes the S/N curve', () => {
    const r = sightline([
      'dm',
      'refine',
      cube,
      '--range',
      '47.11:47.13:0.001',
      '--template',
      template,
      '--format',
      'csv',
      '--quiet',
    ]);
    expect(r.code, r.stderr).toBe(0);
    const lines = r.stdout.trim().split('\n');
    expect(lines[0]).toBe('dm,snr');
    expect(lines).toHaveLength(22);
  });

  it('dm refine without a template builds one from the cube and says so', () => {
    const r = sightline(['dm', 'refine', cube, '--range', '47.10:47.14:0.001', '--json']);
    expect(r.code, r.stderr).toBe(0);
    const res = dmRefineResultSchema.parse(JSON.parse(r.stdout));
    expect(res.template).toEqual({ path: null, built_from_cube: true });
    expect(res.warnings.join(' ')).toMatch(/built from this cube/);
  });

  it('a peak at the edge of the range exits 1 with the result still written', () => {
    const out = join(dir, 'edge.json');
    const r = sightline([
      'dm',
      'refine',
      cube,
      '--range',
      '47.00:47.05:0.001',
      '--template',
      template,
      '--json',
      '--out',
      out,
    ]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/edge of --range/);
    expect(JSON.parse(readFileSync(out, 'utf8')).at_edge).toBe(true);
  });
});

describe('templates from many visits, and wideband arrival times', () => {
  const rng = createRng(5);
  const visits = Array.from({ length: 6 }, (_, v) =>
    writeCube(
      `SBP-C_6060${v}`,
      {
        mjd: `6060${v}.25`,
        dmTrue: 47.12 + 1e-3 * rng.normal(),
        phase: 0.3 + 0.001 * rng.normal(),
      },
      100 + v,
    ),
  );

  it('template build writes a smooth profile file with its peak at phase ½', () => {
    const out = join(dir, 'built.template.json');
    const r = sightline(['template', 'build', ...visits, '--out', out]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toMatch(/template of SBP-C from 6 of 6 visit\(s\), 256 bins/);
    const t = JSON.parse(readFileSync(out, 'utf8'));
    expect(t.schema).toBe('sightline/template@1');
    expect(t.fiducial_phase).toBe(0.5);
    expect(t.input).toHaveLength(12); // each cube and its sidecar
    const bins: number[] = t.profiles[0].bins;
    expect(bins.indexOf(Math.max(...bins))).toBeGreaterThanOrEqual(127);
    expect(bins.indexOf(Math.max(...bins))).toBeLessThanOrEqual(129);
    // and it serves as a template
    const x = sightline(['toas', 'extract', visits[0], '--template', out, '--quiet']);
    expect(x.code, x.stderr).toBe(0);
  });

  it('toas extract --joint gives one arrival time and DM per cube; dm series takes them', () => {
    const out = join(dir, 'wideband.csv');
    const r = sightline(['toas', 'extract', ...visits, '--template', template, '--joint']);
    expect(r.code, r.stderr).toBe(0);
    writeFileSync(out, r.stdout);
    const lines = r.stdout.trim().split('\n');
    expect(lines[0]).toBe(
      'source,mjd,freq_mhz,err_us,dm,dm_err,snr,reduced_chi2,n_channels,receiver',
    );
    expect(lines).toHaveLength(7);
    const series = sightline(['dm', 'series', out, '--json']);
    expect(series.code, series.stderr).toBe(0);
    const s = dmSeriesResultSchema.parse(JSON.parse(series.stdout));
    expect(s.points).toHaveLength(6);
    lines.slice(1).forEach((line, i) => {
      const [, , , , dm, dmErr] = line.split(',');
      expect(s.points[i].dm).toBeCloseTo(Number(dm), 9);
      expect(s.points[i].dm_err).toBeCloseTo(Number(dmErr), 12);
    });
  });
});

describe('bad cube input: clear errors, exit codes, nothing written', () => {
  it('a template with another number of bins is resampled, with a warning', () => {
    const t128 = writeTemplate('t128.json', 128);
    const r = sightline(['toas', 'extract', cube, '--template', t128, '--out', join(dir, 'r.csv')]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toMatch(/template has 128 bins and the cube 256: the template was resampled/);
  });

  it('NaN in some bins of a channel: exit 2 naming file, channel row and array index', () => {
    const path = writeCube('nan', {}, 7);
    const bytes = readFileSync(path);
    // header of a small .npy written by writeNpy is 128 bytes; channel 5 (0-based), bin 40
    const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
    const header = bytes.length - 32 * NBIN * 8;
    view.setFloat64(header + (5 * NBIN + 40) * 8, NaN, true);
    writeFileSync(path, bytes);
    const out = join(dir, 'nan.csv');
    const r = sightline(['toas', 'extract', path, '--template', template, '--out', out]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(path);
    expect(r.stderr).toMatch(/row 6: column "data\[5, 40\]"/);
    expect(r.stderr).toMatch(/entirely NaN or constant/);
    expect(existsSync(out)).toBe(false);
  });

  it('zero channels are flagged and counted, not fatal', () => {
    const path = writeCube('zeros', { flagged: [0, 1, 2, 30] }, 8);
    const r = sightline(['toas', 'extract', path, '--template', template, '--quiet', '--json']);
    expect(r.code, r.stderr).toBe(0);
    const channels = (JSON.parse(r.stdout) as Array<{ channel: number }>).map((x) => x.channel);
    for (const c of [1, 2, 3, 31]) expect(channels).not.toContain(c);
  });

  it('a cube with no pulse gives no arrival times: exit 1, no output file', () => {
    const path = writeCube('faint', { amplitude: () => 0 }, 9);
    const out = join(dir, 'faint.csv');
    const r = sightline(['toas', 'extract', path, '--template', template, '--out', out]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/no channel reached S\/N 8/);
    expect(existsSync(out)).toBe(false);
  });

  it.each([
    ['47.1:47.2:0', /STEP must be positive/],
    ['47.1:47.2:-0.01', /STEP must be positive/],
    ['47.2:47.1:0.01', /HI \(47.1\) is below LO \(47.2\)/],
    ['47.1:47.2', /is not LO:HI:STEP/],
    ['a:47.2:0.01', /LO "a" is not a finite number/],
    ['0:1000:1e-6', /at most 1000000/],
  ])('--range %s is a usage error (exit 2)', (range, message) => {
    const r = sightline(['dm', 'refine', cube, '--range', range, '--template', template]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(message);
  });

  it('a template with a NaN bin is refused, naming the template file', () => {
    const path = join(dir, 'bad.template.json');
    writeFileSync(
      path,
      JSON.stringify({
        source: 'SBP-C',
        mjd: '60000',
        period_s: 0.00193,
        profiles: [
          { freq_mhz: 1000, bins: [...Array(255).fill(0), NaN].map((v, i) => (i === 100 ? 1 : v)) },
        ],
      }).replace('null', 'NaN'),
    );
    const r = sightline(['toas', 'extract', cube, '--template', path]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(path);
    expect(r.stderr).toMatch(/bins\[255\]/);
  });

  it('--meta with several cubes is a usage error', () => {
    const r = sightline([
      'toas',
      'extract',
      cube,
      cube,
      '--template',
      template,
      '--meta',
      `${cube}.json`,
    ]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/--meta names the sidecar of one/);
  });

  it('template build refuses cubes of two pulsars, naming the odd file', () => {
    const other = writeCube('other', { source: 'SBP-A', periodS: 0.00271 }, 10);
    const r = sightline(['template', 'build', cube, other, '--out', join(dir, 'x.json')]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(other);
    expect(r.stderr).toMatch(/this cube is of SBP-A but the first is of SBP-C/);
    expect(existsSync(join(dir, 'x.json'))).toBe(false);
  });
});

describe('the demo cubes (sightline demo generate)', () => {
  const demo = join(dir, 'demo');
  it('template build, toas extract --joint and dm refine recover the injected DMs', () => {
    expect(sightline(['demo', 'generate', '--out', demo, '--seed', '1']).code).toBe(0);
    const truth = JSON.parse(readFileSync(join(demo, 'truth/SBP-B.json'), 'utf8')) as {
      visits: Array<{ mjd: number; cube_dm: number }>;
    };
    const cubes = readdirSync(join(demo, 'cubes/SBP-B'))
      .filter((f) => f.endsWith('.npy'))
      .map((f) => join(demo, 'cubes/SBP-B', f));
    expect(cubes).toHaveLength(truth.visits.length);
    const tmpl = join(dir, 'demo-sbp-b.template.json');
    expect(sightline(['template', 'build', ...cubes, '--out', tmpl, '--quiet']).code).toBe(0);

    const wb = sightline(['toas', 'extract', ...cubes, '--template', tmpl, '--joint', '--quiet']);
    expect(wb.code, wb.stderr).toBe(0);
    const rows = wb.stdout
      .trim()
      .split('\n')
      .slice(1)
      .map((l) => l.split(','));
    expect(rows).toHaveLength(cubes.length);
    // every visit's DM against the injected one (ISM + solar wind). SBP-B's weak scattering
    // (τ ≈ 0.05 µs at 1 GHz, ν^−4.4) delays the low channels and biases each DM by about +½σ,
    // so this checks the bulk (90 % within 2σ, mean offset between 0 and 1σ) and no visit
    // beyond 4.5σ, rather than the 1σ rate, which the seeded calibration suite checks without
    // scattering. (With seed 1 one of the 78 visits lies 3.9σ high: channel arrival times, the
    // S/N curve and the joint fit all agree on it, so it is that visit's noise, not the method.)
    const z = rows.map((r, i) => (Number(r[4]) - truth.visits[i].cube_dm) / Number(r[5]));
    for (const x of z) expect(Math.abs(x)).toBeLessThan(4.5);
    expect(z.filter((x) => Math.abs(x) < 2).length / z.length).toBeGreaterThan(0.9);
    const mean = z.reduce((a, b) => a + b, 0) / z.length;
    expect(mean).toBeGreaterThan(0);
    expect(mean).toBeLessThan(1);

    const refine = sightline([
      'dm',
      'refine',
      cubes[4],
      '--range',
      '21.355:21.365:0.0002',
      '--template',
      tmpl,
      '--json',
    ]);
    expect(refine.code, refine.stderr).toBe(0);
    const res = dmRefineResultSchema.parse(JSON.parse(refine.stdout));
    expect(res.n_flagged).toBeGreaterThanOrEqual(2); // the low receiver's interference block
    expect(Math.abs(res.best.dm - truth.visits[4].cube_dm)).toBeLessThan(3 * res.best.dm_err!);
  });
});
