import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { writeNpy } from '../../shared/profiles/npy-write.js';
import { scintResultSchema } from '../../shared/schemas/scint.js';
import { createRng } from '../../shared/sim/random.js';
import { simulateDynspec, type ScintSimSpec } from '../../shared/sim/scint.js';
import { sightline, tempDir } from '../helpers/cli.js';

const { dir, cleanup } = tempDir('sightline-scint-');
afterAll(cleanup);

const SPEC: ScintSimSpec = {
  nchan: 128,
  nsub: 64,
  f0Mhz: 1150,
  dfMhz: 1,
  dtS: 30,
  dnuDMhz: 4,
  dtDS: 300,
  flux: 1,
  noise: 0.3,
  persistent: { channels: [60, 61, 62], level: 3 },
  bursts: [{ chan0: 20, chan1: 22, sub0: 10, sub1: 13, level: 6 }],
};

function writeSpectrum(name: string, over: Partial<ScintSimSpec> = {}, seed = 1): string {
  const spec = { ...SPEC, ...over };
  const data = simulateDynspec(spec, createRng(seed));
  const path = join(dir, `${name}.npy`);
  writeFileSync(path, writeNpy(data, [spec.nchan, spec.nsub], '<f8'));
  writeFileSync(
    `${path}.json`,
    JSON.stringify({
      source: 'SBP-E',
      mjd: '60860.312500',
      receiver: 'mid',
      freqs_mhz: { start: spec.f0Mhz, step: spec.dfMhz },
      times_s: { start: 0, step: spec.dtS },
    }),
  );
  return path;
}

const visit = writeSpectrum('visit');

describe('sightline scint analyse', () => {
  it('writes scint@1 JSON with flags, widths, τ and the pictures; PNGs on request', () => {
    const dyn = join(dir, 'dyn.png');
    const sec = join(dir, 'sec.png');
    const r = sightline([
      'scint',
      'analyse',
      visit,
      '--json',
      '--dynspec',
      dyn,
      '--secondary',
      sec,
      '--quiet',
    ]);
    expect(r.code, r.stderr).toBe(0);
    const res = scintResultSchema.parse(JSON.parse(r.stdout));
    expect(res.schema).toBe('sightline/scint@1');
    expect(res.status).toBe('measured');
    expect(res.receiver).toBe('mid');
    // the injected persistent block is flagged as such; the burst's pixels count
    for (const c of [60, 61, 62])
      expect(res.rfi.channels.find((f) => f.channel === c)?.kind).toBe('persistent');
    expect(res.rfi.pixels_flagged).toBeGreaterThan(0);
    expect(res.rfi.flagged_fraction).toBeLessThan(0.1);
    // the injected widths within 3σ (one seeded spectrum; the calibration suite checks 1σ rates)
    expect(Math.abs(res.dnu_d_mhz! - SPEC.dnuDMhz)).toBeLessThan(3 * res.dnu_d_err_mhz!);
    expect(Math.abs(res.dt_d_s! - SPEC.dtDS)).toBeLessThan(3 * res.dt_d_err_s!);
    expect(res.tau_us).toBeCloseTo(1.16 / (2 * Math.PI * res.dnu_d_mhz!), 12);
    expect(res.pictures.dynspec.values).toHaveLength(
      res.pictures.dynspec.n_freq * res.pictures.dynspec.n_time,
    );
    expect(res.input.map((i) => i.path)).toEqual([visit, `${visit}.json`]);
    for (const png of [dyn, sec])
      expect(readFileSync(png).subarray(1, 4).toString('latin1')).toBe('PNG');
  });

  it('the table names the interference and the widths; --format csv gives one row', () => {
    const t = sightline(['scint', 'analyse', visit, '--quiet']);
    expect(t.code).toBe(0);
    expect(t.stdout).toMatch(/interference: [\d.]+% flagged — channels 3 persistent/);
    expect(t.stdout).toMatch(/Δν_d \(MHz\)/);
    const c = sightline(['scint', 'analyse', visit, '--format', 'csv', '--quiet']);
    const [head, row, extra] = c.stdout.trim().split('\n');
    // the review app's CSV export columns (shared/review/rows.ts)
    expect(head.split(',').slice(0, 4)).toEqual(['source', 'mjd', 'receiver', 'status']);
    expect(head.split(',')).toContain('dnu_d_mhz');
    expect(head.split(',')).toContain('tau_lower_us');
    expect(row.startsWith('SBP-E,60860.312500,mid,')).toBe(true);
    expect(extra).toBeUndefined();
  });

  it('reads the long-form CSV layout with --meta for the source and epoch', () => {
    const rng = createRng(2);
    const spec = { ...SPEC, nchan: 32, nsub: 24, persistent: undefined, bursts: [] };
    const data = simulateDynspec(spec, rng);
    let text = 'freq_mhz,time_s,intensity\n';
    for (let c = 0; c < spec.nchan; c++)
      for (let t = 0; t < spec.nsub; t++)
        text += `${spec.f0Mhz + c * spec.dfMhz},${t * spec.dtS},${data[c * spec.nsub + t]}\n`;
    const csvPath = join(dir, 'visit.csv');
    writeFileSync(csvPath, text);
    const meta = join(dir, 'visit.meta.json');
    writeFileSync(meta, JSON.stringify({ source: 'SBP-B', mjd: '60300.5' }));
    const r = sightline(['scint', 'analyse', csvPath, '--meta', meta, '--json', '--quiet']);
    expect(r.code, r.stderr).toBe(0);
    const res = scintResultSchema.parse(JSON.parse(r.stdout));
    expect([res.source, res.mjd, res.nchan, res.nsub]).toEqual(['SBP-B', '60300.5', 32, 24]);
  });

  it('--mask starts from remembered channels; --tails puts τ from tails beside τ from scintles', () => {
    const mask = join(dir, 'mask.json');
    writeFileSync(mask, JSON.stringify({ channels_mhz: [1155, 1156.2] }));
    const tails = join(dir, 'tails.json');
    writeFileSync(
      tails,
      JSON.stringify({
        schema: 'sightline/scatter-fit@1',
        software: { name: 'sightline', version: '0' },
        input: [],
        source: 'SBP-E',
        mjd: '60860.3',
        period_s: 0.00333,
        nbin: 256,
        model: 'gauss',
        dm: 33.9,
        bands: [],
        power_law: {
          ref_freq_mhz: 1000,
          tau_ref_us: 0.2,
          tau_ref_err_us: 0.02,
          alpha: 4.4,
          alpha_err: 0.1,
          alpha_fixed: false,
          n_bands: 4,
          chi2: 3,
          dof: 2,
          reduced_chi2: 1.5,
        },
        expected_tau_us: null,
        expected: null,
        warnings: [],
      }),
    );
    const r = sightline([
      'scint',
      'analyse',
      visit,
      '--mask',
      mask,
      '--tails',
      tails,
      '--json',
      '--quiet',
    ]);
    expect(r.code, r.stderr).toBe(0);
    const res = scintResultSchema.parse(JSON.parse(r.stdout));
    expect(res.rfi.channels.filter((c) => c.kind === 'given').map((c) => c.channel)).toEqual([
      5, 6,
    ]);
    // τ(ν) = τ_ref (ν/ν_ref)^−α at the band centre
    const centre = res.ref_freq_mhz;
    expect(res.tau_from_tails!.tau_us).toBeCloseTo(0.2 * (centre / 1000) ** -4.4, 12);
    expect(res.tau_from_tails!.freq_mhz).toBe(centre);
  });

  it('scintles narrower than a channel: status unresolved with limits, exit 0', () => {
    const path = writeSpectrum('washed', { dnuDMhz: 0.2, modulation: 0.05 }, 3);
    const r = sightline(['scint', 'analyse', path, '--json', '--quiet']);
    expect(r.code, r.stderr).toBe(0);
    const res = scintResultSchema.parse(JSON.parse(r.stdout));
    expect(res.status).toBe('unresolved');
    expect(res.dnu_d_mhz).toBeNull();
    expect(res.dnu_d_upper_mhz).toBe(1);
    expect(res.tau_lower_us).toBeCloseTo(1.16 / (2 * Math.PI), 12);
  });
});

describe('bad dynamic spectra: clear errors, exit 2, nothing written', () => {
  it('a non-uniform frequency axis names the sidecar and the entry', () => {
    const path = writeSpectrum('uneven', {
      nchan: 16,
      nsub: 16,
      persistent: undefined,
      bursts: [],
    });
    const freqs = Array.from({ length: 16 }, (_, i) => 1150 + i + (i === 9 ? 0.4 : 0));
    writeFileSync(
      `${path}.json`,
      JSON.stringify({ source: 'SBP-E', freqs_mhz: freqs, times_s: { start: 0, step: 30 } }),
    );
    const out = join(dir, 'uneven.json');
    const r = sightline(['scint', 'analyse', path, '--json', '--out', out]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`${path}.json`);
    expect(r.stderr).toMatch(/column "freqs_mhz\[9\]"/);
    expect(existsSync(out)).toBe(false);
  });

  it('an infinite pixel names the array index; NaN pixels are flags', () => {
    const path = writeSpectrum('inf', { nchan: 16, nsub: 16, persistent: undefined, bursts: [] });
    const bytes = readFileSync(path);
    const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
    const header = bytes.length - 16 * 16 * 8;
    view.setFloat64(header + (3 * 16 + 7) * 8, Infinity, true);
    view.setFloat64(header + (4 * 16 + 7) * 8, NaN, true);
    writeFileSync(path, bytes);
    const r = sightline(['scint', 'analyse', path]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/column "data\[3, 7\]"/);
  });

  it('a missing sidecar says where it looked; a CSV cell given twice names both rows', () => {
    const lone = join(dir, 'lone.npy');
    writeFileSync(lone, writeNpy(new Float64Array(64 * 64), [64, 64], '<f8'));
    const r = sightline(['scint', 'analyse', lone]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/no sidecar JSON for this array: looked for .*lone\.npy\.json/);

    const csvPath = join(dir, 'dup.csv');
    writeFileSync(csvPath, 'freq_mhz,time_s,intensity\n1200,0,1\n1200,0,2\n');
    const d = sightline(['scint', 'analyse', csvPath]);
    expect(d.code).toBe(2);
    expect(d.stderr).toMatch(/rows 1 and 2 both give 1200 MHz at 0 s/);
  });

  it('a CSV without the intensity column names the column', () => {
    const csvPath = join(dir, 'nocol.csv');
    writeFileSync(csvPath, 'freq_mhz,time_s,power\n1200,0,1\n');
    const r = sightline(['scint', 'analyse', csvPath]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/missing column "intensity"/);
  });
});
