import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { scatterFitResultSchema } from '../../shared/schemas/scatter-fit.js';
import { dmFitResultSchema } from '../../shared/schemas/dm-fit.js';
import { writeNpy } from '../../shared/profiles/npy-write.js';
import { sightline, tempDir } from '../helpers/cli.js';

const { dir, cleanup } = tempDir();
const demo = join(dir, 'demo');
beforeAll(() => {
  expect(sightline(['demo', 'generate', '--out', demo, '--seed', '5', '--quiet']).code).toBe(0);
});
afterAll(cleanup);

const cube = (name: string) => {
  const files = readdirSync(join(demo, 'profiles', name)).filter((f) => f.endsWith('.npy'));
  return join(demo, 'profiles', name, files[3]);
};

describe('sightline scatter fit', () => {
  it('fits the strongly scattered demo pulsar: α near the injected 4.1, JSON per scatter-fit@1, and a PNG', () => {
    const png = join(dir, 'd.png');
    const r = sightline(['scatter', 'fit', cube('SBP-D'), '--json', '--plot', png]);
    expect(r.code, r.stderr).toBe(0);
    const out = scatterFitResultSchema.parse(JSON.parse(r.stdout));
    expect(out.source).toBe('SBP-D');
    expect(out.input.map((i) => i.path.endsWith('.npy.json') || i.path.endsWith('.npy'))).toEqual([
      true,
      true,
    ]);
    const low = out.bands.filter((b) => b.freq_mhz < 900);
    expect(low.every((b) => b.status === 'fitted')).toBe(true);
    expect(out.power_law!.alpha_fixed).toBe(false);
    expect(Math.abs(out.power_law!.alpha - 4.1)).toBeLessThan(4 * out.power_law!.alpha_err!);
    expect(out.expected!.tau_us).toBeGreaterThan(0);
    const bytes = readFileSync(png);
    expect(bytes.subarray(1, 4).toString()).toBe('PNG');
    expect(bytes.length).toBeGreaterThan(20000);
  });

  it('reports unresolved scattering as upper limits for a weakly scattered pulsar (exit 1: no power law)', () => {
    const r = sightline(['scatter', 'fit', cube('SBP-B'), '--alpha', '4.4', '--json']);
    // the result is still written, and the missing power law is a failed check
    expect(r.code, r.stderr).toBe(1);
    expect(r.stderr).toMatch(/no τ\(ν\) power law/);
    const out = scatterFitResultSchema.parse(JSON.parse(r.stdout));
    const limits = out.bands.filter((b) => b.status === 'upper_limit');
    expect(limits.length).toBeGreaterThan(out.bands.length / 2);
    for (const b of limits) expect(b.tau_upper_us).toBeGreaterThan(0);
  });

  it('table output names the power law; a single band with α free exits 2 with a clear message', () => {
    const table = sightline(['scatter', 'fit', cube('SBP-D')]);
    expect(table.stdout).toMatch(/power law: τ\(1000 MHz\) = .* α = 4\.\d+ ± /);
    const one = join(dir, 'one.json');
    const bins = Array.from(
      { length: 128 },
      (_, i) => Math.exp(-0.5 * ((i - 40) / 3) ** 2) * 50 + (i % 7) * 0.1,
    );
    writeFileSync(
      one,
      JSON.stringify({
        source: 'TEST-1',
        mjd: '60000.5',
        period_s: 0.004,
        profiles: [{ freq_mhz: 800, bins }],
      }),
    );
    const r = sightline(['scatter', 'fit', one]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/α cannot be fitted from a single band/);
  });

  it('bad cubes exit 2 naming the file: wrong dtype, truncated, shape/sidecar mismatch', () => {
    const ints = join(dir, 'ints.npy');
    const good = writeNpy(new Float64Array(2 * 64).fill(1), [2, 64], '<f8');
    const header = Buffer.from(good.subarray(0, 128)).toString('latin1').replace("'<f8'", "'<i8'");
    writeFileSync(
      ints,
      Buffer.concat([Buffer.from(header, 'latin1'), Buffer.from(good.subarray(128))]),
    );
    writeFileSync(
      `${ints}.json`,
      JSON.stringify({ source: 'T', mjd: '60000', period_s: 0.004, freqs_mhz: [700, 800] }),
    );
    const a = sightline(['scatter', 'fit', ints]);
    expect(a.code).toBe(2);
    expect(a.stderr).toMatch(/ints\.npy: .*'<i8'/);
    const cut = join(dir, 'cut.npy');
    writeFileSync(cut, good.subarray(0, good.length - 100));
    writeFileSync(
      `${cut}.json`,
      JSON.stringify({ source: 'T', mjd: '60000', period_s: 0.004, freqs_mhz: [700, 800] }),
    );
    const b = sightline(['scatter', 'fit', cut]);
    expect(b.code).toBe(2);
    expect(b.stderr).toMatch(/cut\.npy: .*bytes/);
    const mismatch = join(dir, 'mismatch.npy');
    writeFileSync(mismatch, good);
    writeFileSync(
      `${mismatch}.json`,
      JSON.stringify({ source: 'T', mjd: '60000', period_s: 0.004, freqs_mhz: [700, 800, 900] }),
    );
    const c = sightline(['scatter', 'fit', mismatch, '--out', join(dir, 'never.json')]);
    expect(c.code).toBe(2);
    expect(c.stderr).toMatch(/mismatch\.npy\.json: .*3 frequencies .* 2 channels/);
    expect(existsSync(join(dir, 'never.json'))).toBe(false);
  });
});

describe('sightline dm fit --scatter', () => {
  it('lists DM-only, α = 4.4 and α-free models with χ², AIC, BIC and the preferred one', () => {
    const r = sightline([
      'dm',
      'fit',
      join(demo, 'toas', 'SBP-D.csv'),
      '--scatter',
      'free',
      '--json',
    ]);
    expect(r.code, r.stderr).toBe(0);
    const out = dmFitResultSchema.parse(JSON.parse(r.stdout));
    const fitted = out.visits.filter((v) => v.models);
    expect(fitted.length).toBeGreaterThan(out.visits.length * 0.8);
    for (const v of fitted) {
      expect(v.models!.map((m) => m.name)).toEqual(['dm_only', 'alpha_fixed', 'alpha_free']);
      for (const m of v.models!)
        expect(m.bic).toBeCloseTo(
          m.chi2 + m.n_params * Math.log(v.n_toas - v.flagged_rows.length),
          9,
        );
      expect(v.preferred).toBe(v.models!.reduce((a, b) => (b.bic < a.bic ? b : a)).name);
      expect(v.dm_tau_cov).toBeDefined();
    }
    // SBP-D's scattering changes are large: a scattering model is preferred in most visits
    const scattering = fitted.filter((v) => v.preferred !== 'dm_only').length;
    expect(scattering / fitted.length).toBeGreaterThan(0.6);
  });

  it('reports the chromatic model consistently: offsets, χ² and dof of the model asked for', () => {
    const r = sightline([
      'dm',
      'fit',
      join(demo, 'toas', 'SBP-D.csv'),
      '--scatter',
      'fixed',
      '--json',
    ]);
    const out = dmFitResultSchema.parse(JSON.parse(r.stdout));
    for (const v of out.visits.filter((x) => x.models && x.receiver_offsets_us)) {
      const chosen = v.models!.find((m) => m.name === 'alpha_fixed')!;
      expect(v.chi2).toBeCloseTo(chosen.chi2, 9);
      expect(v.dof).toBe(chosen.dof);
      expect(v.offset_us).toBeCloseTo(Object.values(v.receiver_offsets_us!)[0], 9);
      expect(v.dm).toBeCloseTo(chosen.dm, 12);
      expect(chosen.aic).toBeCloseTo(chosen.chi2 + 2 * chosen.n_params, 9);
    }
    const csvOut = sightline([
      'dm',
      'fit',
      join(demo, 'toas', 'SBP-D.csv'),
      '--scatter',
      'fixed',
      '--format',
      'csv',
    ]);
    expect(csvOut.stdout.split('\n')[0]).toMatch(
      /tau_ref_us,tau_ref_err_us,alpha,alpha_err,ref_freq_mhz,dm_tau_corr,preferred$/,
    );
  });

  it('--alpha without --scatter is a usage error', () => {
    const r = sightline(['dm', 'fit', join(demo, 'toas', 'SBP-D.csv'), '--alpha', '4']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/add --scatter fixed or --scatter free/);
  });
});
