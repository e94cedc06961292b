// Fits on degenerate data say what they cannot tell and why — `unconstrained`, `upper_limit`,
// `unresolved` or `failed` with a reason, or a usage error naming the problem — and never put NaN,
// Infinity or a number without meaning into JSON. Every result is checked against the shared
// output schema (zod rejects NaN and ±Infinity in numbers; JSON.stringify would have turned them
// into null). Expectations are facts of the trade (common practice): one frequency cannot
// separate a dispersive delay from an offset; a receiver seen at a single frequency makes its
// offset collinear with the DM term; a profile with no scattering tail constrains τ only from
// above; a spectrum with every pixel flagged has nothing to correlate.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import {
  dmFitResultSchema,
  scatterFitResultSchema,
  scintResultSchema,
} from '../../shared/schemas/index.js';
import { sightline, tempDir } from '../helpers/cli.js';

const { dir, cleanup } = tempDir('sightline-degenerate-');
afterAll(cleanup);

const csv = (name: string, header: string, rows: (string | number)[][]) => {
  const file = join(dir, name);
  writeFileSync(file, [header, ...rows.map((r) => r.join(','))].join('\n') + '\n');
  return file;
};

/**
 * Run a CLI command that prints JSON; parse it and check it against `schema`. Exit 1 ("a check
 * failed": nothing could be fitted) still writes the result, which says why per visit or band.
 */
function jsonOf<T>(args: string[], schema: { parse(v: unknown): T }, exit: 0 | 1 = 0): T {
  const r = sightline([...args, '--json', '--quiet']);
  expect(r.code, `${args.join(' ')}: ${r.stderr}`).toBe(exit);
  if (exit === 1)
    expect(r.stderr).toMatch(/could be fitted|no τ\(ν\) power law|could not be measured/);
  expect(r.stdout).not.toMatch(/NaN|Infinity/);
  return schema.parse(JSON.parse(r.stdout));
}

describe('DM fits on degenerate arrival times', () => {
  it('one frequency per visit: unconstrained with no DM number', () => {
    const f = csv(
      'one-freq.csv',
      'source,mjd,freq_mhz,err_us,residual_us',
      Array.from({ length: 6 }, (_, i) => ['SBP-A', 60500 + i * 1e-3, 1400, 0.5, 0.1 * i]),
    );
    const out = jsonOf(['dm', 'fit', f], dmFitResultSchema, 1);
    expect(out.visits).toHaveLength(1);
    expect(out.visits[0]).toMatchObject({ status: 'unconstrained', dm: null, dm_err: null });
    expect(out.visits[0].warnings.join(' ')).toMatch(/fewer than two distinct frequencies/);
  });

  it('identical residuals everywhere (zero scatter): a fit with finite numbers, or unconstrained', () => {
    const f = csv(
      'flat.csv',
      'source,mjd,freq_mhz,err_us,residual_us',
      [700, 900, 1100, 1400, 2000, 2900].map((nu, i) => ['SBP-A', 60500 + i * 1e-3, nu, 0.5, 1]),
    );
    const v = jsonOf(['dm', 'fit', f], dmFitResultSchema).visits[0];
    if (v.status === 'fitted') {
      expect(Number.isFinite(v.dm!)).toBe(true);
      expect(Math.abs(v.dm!)).toBeLessThan(1e-9); // a flat line has no ν⁻² term
    } else expect(v.dm).toBeNull();
  });

  it('each receiver at a single frequency: offsets collinear with DM, so unconstrained', () => {
    const f = csv('collinear.csv', 'source,mjd,freq_mhz,err_us,residual_us,receiver', [
      ['SBP-A', 60500.0, 700, 0.5, 1.2, 'low'],
      ['SBP-A', 60500.001, 700, 0.5, 1.1, 'low'],
      ['SBP-A', 60500.002, 1400, 0.5, 0.3, 'mid'],
      ['SBP-A', 60500.003, 1400, 0.5, 0.2, 'mid'],
    ]);
    const v = jsonOf(['dm', 'fit', f], dmFitResultSchema, 1).visits[0];
    expect(v).toMatchObject({ status: 'unconstrained', dm: null });
    expect(v.warnings.length).toBeGreaterThan(0);
  });

  it('zero or negative errors are refused naming the row and the column', () => {
    const f = csv('zero-err.csv', 'source,mjd,freq_mhz,err_us,residual_us', [
      ['SBP-A', 60500, 700, 0.5, 1],
      ['SBP-A', 60500.001, 1400, 0, 1],
    ]);
    const r = sightline(['dm', 'fit', f, '--json']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/zero-err\.csv/);
    expect(r.stderr).toMatch(/row 3|line 3/);
    expect(r.stderr).toMatch(/err_us/);
  });
});

describe('scattering fits on degenerate profiles', () => {
  const bins = 256;
  const gauss = (w: number, centre = 0.3) =>
    Array.from({ length: bins }, (_, i) => Math.exp(-0.5 * ((i / bins - centre) / w) ** 2));
  const profiles = (name: string, make: (nu: number) => number[]) => {
    const file = join(dir, name);
    writeFileSync(
      file,
      JSON.stringify({
        source: 'SBP-F',
        mjd: '60500.5',
        period_s: 0.5,
        profiles: [600, 800, 1000, 1400].map((nu) => ({
          freq_mhz: nu,
          bins: make(nu),
          noise: 0.01,
        })),
      }),
    );
    return file;
  };

  it('no tail at all: every band an upper limit, never a τ measurement', () => {
    const out = jsonOf(
      ['scatter', 'fit', profiles('no-tail.json', () => gauss(0.01))],
      scatterFitResultSchema,
      1,
    );
    for (const b of out.bands) {
      expect(b.status).toBe('upper_limit');
      expect(b.tau_upper_us).toBeGreaterThan(0);
      expect(Number.isFinite(b.tau_upper_us!)).toBe(true);
    }
  });

  it('a flat profile (no pulse): refused naming the file, the band and the column', () => {
    const f = profiles('flat.json', () => Array.from({ length: bins }, () => 1));
    const r = sightline(['scatter', 'fit', f, '--json']);
    expect(r.code).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toMatch(/flat\.json/);
    expect(r.stderr).toMatch(/profiles\[0\]\.bins/);
    expect(r.stderr).toMatch(/no signal/);
  });

  it('a tail longer than the period (τ at its bound): not a confident measurement', () => {
    // smeared across the whole rotation: the profile is almost flat with a shallow bump
    const out = jsonOf(
      [
        'scatter',
        'fit',
        profiles('smeared.json', () => gauss(0.45, 0.5).map((x) => 0.98 + 0.02 * x)),
      ],
      scatterFitResultSchema,
      1,
    );
    for (const b of out.bands)
      if (b.status === 'fitted') {
        // a τ the data cannot pin down comes with an error of its own size or larger
        expect(b.tau_err_us! / b.tau_us!).toBeGreaterThan(0.3);
      } else expect(['failed', 'upper_limit']).toContain(b.status);
  });
});

describe('scintillation on degenerate dynamic spectra', () => {
  const grid = (name: string, value: (c: number, t: number) => number | string) => {
    const rows: (string | number)[][] = [];
    for (let c = 0; c < 32; c++)
      for (let t = 0; t < 24; t++) rows.push([1300 + c * 0.5, t * 10, value(c, t)]);
    return csv(name, 'freq_mhz,time_s,intensity', rows);
  };
  const meta = join(dir, 'meta.json');
  writeFileSync(meta, JSON.stringify({ source: 'SBP-B', mjd: '60500.2' }));

  it('every pixel flagged (NaN): failed, with neither a measurement nor a limit', () => {
    const f = grid('all-flagged.csv', () => 'NaN');
    const out = jsonOf(['scint', 'analyse', f, '--meta', meta], scintResultSchema, 1);
    // no data, so no measurement and no limit either (it once claimed τ > one channel's)
    expect(out).toMatchObject({ status: 'failed', dnu_d_upper_mhz: null, tau_lower_us: null });
    expect(out.rfi.snr_cost_fraction).toBe(1);
    expect(out.warnings.join(' ')).toMatch(/nothing to correlate/);
  });

  it('a constant spectrum (no scintles, no noise): never a Δν_d measurement', () => {
    const f = grid('constant.csv', () => 1);
    const r = sightline(['scint', 'analyse', f, '--meta', meta, '--json', '--quiet']);
    if (r.code === 0) {
      expect(r.stdout).not.toMatch(/NaN|Infinity/);
      const out = scintResultSchema.parse(JSON.parse(r.stdout));
      expect(out.status).not.toBe('measured');
    } else {
      expect(r.code).toBe(2);
      expect(r.stderr).toMatch(/constant\.csv/);
    }
  });
});
