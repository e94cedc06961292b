import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { parse } from 'csv-parse/sync';
import { dmFitResultSchema } from '../../shared/schemas/dm-fit.js';
import { dmSeriesResultSchema } from '../../shared/schemas/dm-series.js';
import { sightline, tempDir } from '../helpers/cli.js';

const { dir, cleanup } = tempDir();
const demo = join(dir, 'demo');
const toasE = join(demo, 'toas', 'SBP-E.csv');
// the quiet reference pulsar: no scattering changes to bias a DM-only fit
const toasB = join(demo, 'toas', 'SBP-B.csv');

beforeAll(() => {
  const r = sightline(['demo', 'generate', '--out', demo, '--seed', '3', '--quiet']);
  expect(r.code).toBe(0);
});
afterAll(cleanup);

function rms(values: number[]): number {
  const m = values.reduce((s, v) => s + v, 0) / values.length;
  return Math.sqrt(values.reduce((s, v) => s + (v - m) ** 2, 0) / values.length);
}

describe('demo generate', () => {
  it('writes the six fictional pulsars, reproducibly from the seed', () => {
    expect(readdirSync(join(demo, 'toas')).sort()).toEqual([
      'SBP-A.csv',
      'SBP-B.csv',
      'SBP-C.csv',
      'SBP-D.csv',
      'SBP-E.csv',
      'SBP-F.csv',
    ]);
    const again = join(dir, 'again');
    expect(sightline(['demo', 'generate', '--out', again, '--seed', '3', '--quiet']).code).toBe(0);
    expect(readFileSync(join(again, 'toas', 'SBP-C.csv'), 'utf8')).toBe(
      readFileSync(join(demo, 'toas', 'SBP-C.csv'), 'utf8'),
    );
    // refuses to overwrite a non-empty folder without --force
    expect(sightline(['demo', 'generate', '--out', again, '--quiet']).code).toBe(2);
  });
});

describe('dm fit → dm series → toas correct on the demo data', () => {
  it('fits every visit, recovers the injected DM and records inputs and constant', () => {
    const out = join(dir, 'fit.json');
    const r = sightline(['dm', 'fit', toasB, '--clip', '5', '--json', '--out', out, '--quiet']);
    expect(r.code).toBe(0);
    expect(r.stdout).toBe('');
    const fit = dmFitResultSchema.parse(JSON.parse(readFileSync(out, 'utf8')));
    expect(fit.constant).toEqual({ name: 'conventional', value: 1 / 2.41e-4 });
    expect(fit.input[0].sha256).toMatch(/^[0-9a-f]{64}$/);
    expect(fit.summary.n_fitted).toBe(fit.summary.n_visits);
    expect(fit.visits.every((v) => v.dm_kind === 'offset')).toBe(true);
    // visits seen by two or more receivers get one offset per receiver
    expect(fit.visits.filter((v) => v.receiver_offsets_us).length).toBeGreaterThan(
      fit.visits.length / 2,
    );
    // against the simulator's injected truth (ISM + solar wind), per visit, within 4σ
    const truth = JSON.parse(readFileSync(join(demo, 'truth', 'SBP-B.json'), 'utf8')) as {
      visits: Array<{ mjd: number; ddm_ism: number; dm_solar: number }>;
    };
    let within = 0;
    fit.visits.forEach((v) => {
      const t = truth.visits.reduce((best, x) =>
        Math.abs(x.mjd - v.mjd) < Math.abs(best.mjd - v.mjd) ? x : best,
      );
      if (Math.abs(v.dm! - (t.ddm_ism + t.dm_solar)) <= 4 * v.dm_err_scaled!) within++;
    });
    expect(within / fit.visits.length).toBeGreaterThan(0.97);
  });

  it('CSV output has one row per visit with the interface columns', () => {
    const r = sightline(['dm', 'fit', toasE, '--format', 'csv']);
    const rows = parse(r.stdout, { columns: true }) as Array<Record<string, string>>;
    expect(Object.keys(rows[0]).slice(0, 8)).toEqual([
      'source',
      'mjd',
      'n_toas',
      'n_freqs',
      'freq_min_mhz',
      'freq_max_mhz',
      'status',
      'dm',
    ]);
    expect(rows.length).toBeGreaterThan(70);
  });

  it('windows of 28 days give fewer, larger visits', () => {
    const gap = dmFitResultSchema.parse(
      JSON.parse(sightline(['dm', 'fit', toasE, '--json']).stdout),
    );
    const win = dmFitResultSchema.parse(
      JSON.parse(sightline(['dm', 'fit', toasE, '--window', '28', '--json']).stdout),
    );
    expect(win.visits.length).toBeLessThan(gap.visits.length * 0.6);
    expect(win.parameters?.grouping).toEqual({ kind: 'window', window_days: 28, start_mjd: 0 });
  });

  it('series with GP smoothing and solar wind, then corrected arrival times remove the DM signal', () => {
    const fitPath = join(dir, 'fit-e.json');
    const seriesPath = join(dir, 'series-e.json');
    const corrected = join(dir, 'corrected-e.csv');
    expect(sightline(['dm', 'fit', toasE, '--json', '--out', fitPath]).code).toBe(0);
    const s = sightline([
      'dm',
      'series',
      fitPath,
      '--smooth',
      'gp',
      '--solar',
      '8',
      '--positions',
      join(demo, 'pulsars.json'),
      '--json',
      '--out',
      seriesPath,
    ]);
    expect(s.code).toBe(0);
    const series = dmSeriesResultSchema.parse(JSON.parse(readFileSync(seriesPath, 'utf8')));
    expect(series.solar?.n0_cm3).toBe(8);
    expect(series.sources[0].gp!.length_days).toBeGreaterThan(3);
    expect(series.smooth!.length).toBeGreaterThan(100);
    // the plasma-lens event near MJD 60860 stands out in the smooth curve
    const peak = series.smooth!.reduce((a, b) => (b.dm > a.dm ? b : a));
    expect(Math.abs(peak.mjd - 60860)).toBeLessThan(20);

    const c = sightline(['toas', 'correct', toasE, '--series', seriesPath, '--out', corrected]);
    expect(c.code, c.stderr).toBe(0);
    const input = parse(readFileSync(toasE, 'utf8'), { columns: true }) as Array<
      Record<string, string>
    >;
    const output = parse(readFileSync(corrected, 'utf8'), { columns: true }) as Array<
      Record<string, string>
    >;
    expect(output).toHaveLength(input.length);
    // input columns unchanged, in order, then the added ones
    expect(Object.keys(output[0])).toEqual([
      ...Object.keys(input[0]),
      'dm_correction_us',
      'mjd_corrected',
      'residual_corrected_us',
    ]);
    output.forEach((row, i) => {
      for (const key of Object.keys(input[i])) expect(row[key]).toBe(input[i][key]);
    });
    // low-band residuals carry the DM signal; after correction their scatter drops sharply
    const low = output.filter((r) => r.receiver === 'low');
    const before = rms(low.map((r) => Number(r.residual_us)));
    const after = rms(low.map((r) => Number(r.residual_corrected_us)));
    expect(after).toBeLessThan(before / 3);
  });

  it('keeps the JSON and NDJSON layouts, unknown columns and bare-number MJDs', () => {
    const seriesPath = join(dir, 'series-small.json');
    const rows = [
      {
        source: 'T',
        mjd: 60000.1,
        freq_mhz: 700,
        err_us: 1,
        residual_us: 5,
        receiver: 'low',
        note: 'a',
      },
      {
        source: 'T',
        mjd: 60000.1001,
        freq_mhz: 1400,
        err_us: 1,
        residual_us: 2,
        receiver: 'mid',
        note: 'b',
      },
      {
        source: 'T',
        mjd: 60000.1002,
        freq_mhz: 1500,
        err_us: 1,
        residual_us: 1.8,
        receiver: 'mid',
        note: 'c',
      },
      {
        source: 'T',
        mjd: 60000.1003,
        freq_mhz: 800,
        err_us: 1,
        residual_us: 4,
        receiver: 'low',
        note: 'd',
      },
    ];
    const nd = join(dir, 'small.ndjson');
    const js = join(dir, 'small.json');
    writeFileSync(nd, rows.map((r) => JSON.stringify(r)).join('\n') + '\n');
    writeFileSync(js, JSON.stringify(rows, null, 1));
    expect(sightline(['dm', 'series', nd, '--json', '--out', seriesPath]).code).toBe(0);
    const ndOut = sightline(['toas', 'correct', nd, '--series', seriesPath]);
    expect(ndOut.code, ndOut.stderr).toBe(0);
    const lines = ndOut.stdout.trim().split('\n');
    expect(lines).toHaveLength(4);
    expect(lines[0]).toMatch(
      /^\{"source":"T","mjd":60000\.1,"freq_mhz":700,.*"note":"a","dm_correction_us":/,
    );
    const jsOut = sightline(['toas', 'correct', js, '--series', seriesPath]);
    const parsed = JSON.parse(jsOut.stdout) as Array<Record<string, unknown>>;
    expect(parsed.map((r) => r.note)).toEqual(['a', 'b', 'c', 'd']);
    expect(typeof parsed[0].mjd).toBe('number');
    expect(typeof parsed[0].mjd_corrected).toBe('string');
  });

  it('exit 1 for arrival times outside the series unless --extrapolate; exit 2 for an unknown source', () => {
    const seriesPath = join(dir, 'series-b.json');
    expect(
      sightline(['dm', 'series', join(demo, 'toas', 'SBP-B.csv'), '--json', '--out', seriesPath])
        .code,
    ).toBe(0);
    const later = join(dir, 'later.csv');
    writeFileSync(later, 'source,mjd,freq_mhz,err_us\nSBP-B,61400.5,1400,1\n');
    const out = join(dir, 'later-corrected.csv');
    const r = sightline(['toas', 'correct', later, '--series', seriesPath, '--out', out]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/outside the series/);
    expect(existsSync(out)).toBe(false);
    expect(
      sightline(['toas', 'correct', later, '--series', seriesPath, '--extrapolate', '--out', out])
        .code,
    ).toBe(0);
    const other = join(dir, 'other.csv');
    writeFileSync(
      other,
      'source,mjd,freq_mhz,err_us\nSBP-B,60500.5,1400,1\nSBP-Z,60500.5,1400,1\n',
    );
    const bad = sightline(['toas', 'correct', other, '--series', seriesPath]);
    expect(bad.code).toBe(2);
    expect(bad.stderr).toMatch(
      /other\.csv: row 2, line 3: column "source": source "SBP-Z" is not in the series/,
    );
    expect(bad.stdout).toBe('');
  });
});
