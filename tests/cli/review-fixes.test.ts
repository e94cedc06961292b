import { afterAll, describe, expect, it } from 'vitest';
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { parse } from 'csv-parse/sync';
import { dmFitResultSchema } from '../../shared/schemas/dm-fit.js';
import { addSeconds, diffSeconds, formatMjd, parseMjd } from '../../shared/time/mjd.js';
import { sightline, tempDir } from '../helpers/cli.js';

const { dir, cleanup } = tempDir();
afterAll(cleanup);
const K = 1 / 2.41e-4; // conventional constant (common practice)

describe('corrections have the right sign and size', () => {
  it('a constant ΔDM of 1e-3 gives dm_correction_us = −K·ΔDM/ν² at every frequency, and the epoch moves by it', () => {
    const freqs = [600, 800, 1400, 3000];
    const lines = ['source,mjd,freq_mhz,err_us,residual_us'];
    for (let v = 0; v < 4; v++) {
      freqs.forEach((f, i) =>
        lines.push(
          `T,${60000 + 10 * v}.${String(3000000 + i).padStart(7, '0')},${f},1,${(K * 1e6 * 1e-3) / f ** 2}`,
        ),
      );
    }
    const toas = join(dir, 'const.csv');
    writeFileSync(toas, lines.join('\n') + '\n');
    const series = join(dir, 'const-series.json');
    expect(sightline(['dm', 'series', toas, '--json', '--out', series]).code).toBe(0);
    const r = sightline(['toas', 'correct', toas, '--series', series]);
    expect(r.code, r.stderr).toBe(0);
    const rows = parse(r.stdout, { columns: true }) as Array<Record<string, string>>;
    for (const row of rows) {
      const f = Number(row.freq_mhz);
      const expected = (-K * 1e-3 * 1e6) / f ** 2; // µs, independent of Sightline's code
      expect(Number(row.dm_correction_us)).toBeCloseTo(expected, 6);
      expect(Number(row.residual_corrected_us)).toBeCloseTo(0, 6);
      const moved = diffSeconds(parseMjd(row.mjd_corrected), parseMjd(row.mjd)) * 1e6;
      expect(moved).toBeCloseTo(expected, 6);
    }
  });
});

describe('time precision through an arrival-time fit (science.md)', () => {
  it('arrival times shifted by 1 ns give infinite-frequency epochs exactly 1 ns apart', () => {
    const P = 0.004;
    const make = (shiftS: number) =>
      [
        'source,mjd,freq_mhz,err_us',
        ...[1200, 1400, 1700, 2200, 3000].map((f, i) => {
          const t = addSeconds(
            parseMjd('60000.123456789012345678'),
            (K * 0.4) / f ** 2 + (i * 11 + 2) * P + shiftS,
          );
          return `T,${formatMjd(t, 20)},${f},0.1`;
        }),
      ].join('\n') + '\n';
    const a = join(dir, 'ns-a.csv');
    const b = join(dir, 'ns-b.csv');
    writeFileSync(a, make(0));
    writeFileSync(b, make(1e-9));
    const fa = dmFitResultSchema.parse(
      JSON.parse(sightline(['dm', 'fit', a, '--period-s', String(P), '--json']).stdout),
    );
    const fb = dmFitResultSchema.parse(
      JSON.parse(sightline(['dm', 'fit', b, '--period-s', String(P), '--json']).stdout),
    );
    const dt = diffSeconds(parseMjd(fb.visits[0].t_inf_mjd!), parseMjd(fa.visits[0].t_inf_mjd!));
    expect(Math.abs(dt - 1e-9)).toBeLessThan(1e-12);
    expect(fa.visits[0].dm).toBeCloseTo(0.4, 9);
  });
});

describe('refusals instead of silent wrong answers', () => {
  it('arrival times without residuals or a period exit 2', () => {
    const f = join(dir, 'noperiod.csv');
    writeFileSync(f, 'source,mjd,freq_mhz,err_us\nT,60000.1,1200,1\nT,60000.1000001,1400,1\n');
    const r = sightline(['dm', 'fit', f]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/need the pulse period/);
  });

  it('demo generate --force replaces only an earlier demo, never another folder', () => {
    const other = join(dir, 'notes');
    mkdirSync(other);
    writeFileSync(join(other, 'notes.txt'), 'keep me');
    const r = sightline(['demo', 'generate', '--out', other, '--force', '--quiet']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/not a Sightline demo data set/);
    expect(readFileSync(join(other, 'notes.txt'), 'utf8')).toBe('keep me');
    const demo = join(dir, 'demo');
    expect(sightline(['demo', 'generate', '--out', demo, '--quiet']).code).toBe(0);
    expect(sightline(['demo', 'generate', '--out', demo, '--quiet']).code).toBe(2);
    expect(sightline(['demo', 'generate', '--out', demo, '--force', '--quiet']).code).toBe(0);
  });

  it('dm series on a finished fit refuses options that would change the fit', () => {
    const toas = join(dir, 'const.csv');
    const fit = join(dir, 'fit.json');
    expect(sightline(['dm', 'fit', toas, '--json', '--out', fit]).code).toBe(0);
    const r = sightline(['dm', 'series', fit, '--window', '28']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/finished DM fit: --window would change the fit/);
    expect(sightline(['dm', 'series', fit, '--constant', 'physical']).code).toBe(2);
  });

  it('an output path in a missing folder is an I/O failure (exit 3), with nothing created', () => {
    const r = sightline([
      'delay',
      '--dm',
      '1',
      '--freq',
      '1400',
      '--out',
      join(dir, 'no-such', 'x.json'),
    ]);
    expect(r.code).toBe(3);
    expect(existsSync(join(dir, 'no-such'))).toBe(false);
  });

  it('NDJSON with a byte-order mark, nested mjd keys and mixed mjd types round-trips unchanged', () => {
    const f = join(dir, 'mixed.ndjson');
    const lines = [
      '\uFEFF{"source":"T","mjd":60000.1,"freq_mhz":700,"err_us":1,"residual_us":5,"meta":{"mjd":1.5}}',
      '{"source":"T","mjd":"60000.1001","freq_mhz":1400,"err_us":1,"residual_us":2}',
      '{"source":"T","mjd":60000.1002,"freq_mhz":2000,"err_us":1,"residual_us":1}',
    ];
    writeFileSync(f, lines.join('\n') + '\n');
    const series = join(dir, 'mixed-series.json');
    expect(sightline(['dm', 'series', f, '--json', '--out', series]).code).toBe(0);
    const out = sightline(['toas', 'correct', f, '--series', series]).stdout.trim().split('\n');
    expect(out[0]).toMatch(
      /^\{"source":"T","mjd":60000\.1,.*"meta":\{"mjd":1\.5\},"dm_correction_us"/,
    );
    expect(out[1]).toMatch(/^\{"source":"T","mjd":"60000\.1001",/);
    expect(out[2]).toMatch(/^\{"source":"T","mjd":60000\.1002,/);
  });
});
