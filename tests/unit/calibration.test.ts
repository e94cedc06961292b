import { describe, expect, it } from 'vitest';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { fitDmVisits } from '../../shared/fit/dm-fit.js';
import { createRng } from '../../shared/sim/random.js';
import { simulateResidualVisit, type SimToa } from '../../shared/sim/visits.js';
import { addSeconds, formatMjd, parseMjd } from '../../shared/time/mjd.js';
import { makeTable } from '../helpers/toas.js';

/** science.md "Calibration of uncertainties": fraction within 1σ in 0.683 ± 3·√(0.683·0.317/N). */
function expectCalibrated(hits: number, n: number) {
  const band = 3 * Math.sqrt((0.683 * 0.317) / n);
  const fraction = hits / n;
  expect(fraction).toBeGreaterThan(0.683 - band);
  expect(fraction).toBeLessThan(0.683 + band);
}

const k = dispersionConstant('conventional');
const N = 400;

describe('injection–recovery: DM uncertainties are calibrated', () => {
  it(`residuals with per-receiver offsets (${N} seeded visits)`, () => {
    const rng = createRng(2024);
    const rows: SimToa[] = [];
    const truth: number[] = [];
    for (let v = 0; v < N; v++) {
      const freqs = [575, 680, 790, 880, 1180, 1330, 1480, 1630, 2200, 2900, 3300];
      const receivers = freqs.map((f) => (f < 1000 ? 'low' : f < 2000 ? 'mid' : 'high'));
      const ddm = 2e-3 * rng.normal();
      truth.push(ddm);
      rows.push(
        ...simulateResidualVisit(
          k,
          {
            source: 'CAL',
            startMjd: 60000.2 + 3 * v,
            ddm,
            freqsMhz: freqs,
            errUs: freqs.map(() => 0.2 + 2 * rng.uniform()),
            receivers,
            receiverOffsetsUs: { low: 3 * rng.normal(), mid: 0, high: 3 * rng.normal() },
          },
          rng,
        ),
      );
    }
    const fits = fitDmVisits(makeTable(rows), {
      constant: k,
      grouping: { kind: 'gap', gapDays: 0.5 },
      evolution: 0,
    });
    expect(fits).toHaveLength(N);
    const hits = fits.filter((f, i) => Math.abs(f.dm! - truth[i]) <= f.dm_err!).length;
    expectCalibrated(hits, N);
  });

  it(`absolute DM from arrival times folded modulo the period (${N} seeded visits)`, () => {
    const rng = createRng(77);
    const period = 0.00562;
    const rows: Array<Record<string, string | number>> = [];
    const truth: number[] = [];
    for (let v = 0; v < N; v++) {
      const dm = 0.3 + 0.6 * rng.uniform(); // sweep 1150–3300 MHz ≤ 2.5 ms < P/2 = 2.8 ms
      truth.push(dm);
      const t0 = parseMjd(
        `${60000 + 2 * v}.${String(Math.floor(rng.uniform() * 1e12)).padStart(12, '0')}`,
      );
      for (const f of [1150, 1300, 1450, 1600, 1750, 2100, 2700, 3300]) {
        const err = 0.3 + rng.uniform();
        const t = addSeconds(
          t0,
          (k.value * dm) / f ** 2 +
            Math.floor(rng.uniform() * 500) * period +
            err * 1e-6 * rng.normal(),
        );
        rows.push({ source: 'CAL', mjd: formatMjd(t, 18), freq_mhz: f, err_us: err });
      }
    }
    const fits = fitDmVisits(makeTable(rows), {
      constant: k,
      grouping: { kind: 'gap', gapDays: 0.5 },
      periodS: period,
      evolution: 0,
    });
    const hits = fits.filter((f, i) => Math.abs(f.dm! - truth[i]) <= f.dm_err!).length;
    expectCalibrated(hits, N);
  });

  it('scaled errors stay calibrated when the quoted errors are too small by 2×', () => {
    const rng = createRng(99);
    const rows: SimToa[] = [];
    const truth: number[] = [];
    for (let v = 0; v < N; v++) {
      const freqs = Array.from({ length: 24 }, (_, i) => 600 + i * 110);
      const errs = freqs.map(() => 0.5 + rng.uniform());
      const ddm = 1e-3 * rng.normal();
      truth.push(ddm);
      const visit = simulateResidualVisit(
        k,
        { source: 'CAL', startMjd: 60000.2 + 3 * v, ddm, freqsMhz: freqs, errUs: errs },
        rng,
      );
      rows.push(...visit.map((r) => ({ ...r, err_us: r.err_us / 2 })));
    }
    const fits = fitDmVisits(makeTable(rows), {
      constant: k,
      grouping: { kind: 'gap', gapDays: 0.5 },
      evolution: 0,
    });
    const formal = fits.filter((f, i) => Math.abs(f.dm! - truth[i]) <= f.dm_err!).length;
    const scaled = fits.filter((f, i) => Math.abs(f.dm! - truth[i]) <= f.dm_err_scaled!).length;
    expect(formal / N).toBeLessThan(0.5);
    expectCalibrated(scaled, N);
  });
});
