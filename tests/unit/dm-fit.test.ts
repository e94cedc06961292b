import { describe, expect, it } from 'vitest';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { fitDmVisits, type DmFitOptions } from '../../shared/fit/dm-fit.js';
import { createRng } from '../../shared/sim/random.js';
import { simulateResidualVisit } from '../../shared/sim/visits.js';
import { formatMjd, parseMjd, addSeconds } from '../../shared/time/mjd.js';
import { makeTable } from '../helpers/toas.js';

const k = dispersionConstant('conventional');
const opts: DmFitOptions = { constant: k, grouping: { kind: 'gap', gapDays: 0.5 }, evolution: 0 };
const FREQS = [600, 700, 800, 1200, 1400, 1600, 2500, 3000];

describe('DM fit per visit', () => {
  it('recovers an injected DM offset from noiseless residuals exactly', () => {
    const rows = FREQS.map((f, i) => ({
      source: 'X',
      mjd: `60000.${String(i).padStart(3, '0')}`,
      freq_mhz: f,
      err_us: 0.5,
      residual_us: 3 + (k.value * 1e6 * 2.5e-3) / f ** 2,
    }));
    const [v] = fitDmVisits(makeTable(rows), opts);
    expect(v.status).toBe('fitted');
    expect(v.dm_kind).toBe('offset');
    expect(v.dm).toBeCloseTo(2.5e-3, 12);
    expect(v.offset_us).toBeCloseTo(3, 9);
    expect(v.chi2).toBeCloseTo(0, 12);
    expect(v.dof).toBe(FREQS.length - 2);
  });

  it('splits visits by gap and by fixed windows', () => {
    const rows = [0, 0.1, 3, 3.1, 20, 20.2].map((d, i) => ({
      source: 'X',
      mjd: String(60000 + d),
      freq_mhz: i % 2 ? 800 : 1400,
      err_us: 1,
      residual_us: 0,
    }));
    expect(fitDmVisits(makeTable(rows), opts)).toHaveLength(3);
    expect(
      fitDmVisits(makeTable(rows), {
        ...opts,
        grouping: { kind: 'window', windowDays: 14, startMjd: 60000 },
      }),
    ).toHaveLength(2);
  });

  it('reports fewer than two distinct frequencies as unconstrained, never fitted', () => {
    const rows = [0, 1, 2].map((i) => ({
      source: 'X',
      mjd: `60000.0${i}`,
      freq_mhz: 1400,
      err_us: 1,
      residual_us: i,
    }));
    const [v] = fitDmVisits(makeTable(rows), opts);
    expect(v.status).toBe('unconstrained');
    expect(v.dm).toBeNull();
    expect(v.warnings[0]).toMatch(/fewer than two distinct frequencies/);
  });

  it('warns about a weak lever arm (ν_max/ν_min < 1.2, common practice)', () => {
    const rng = createRng(3);
    const rows = simulateResidualVisit(
      k,
      {
        source: 'X',
        startMjd: 60000.2,
        ddm: 0,
        freqsMhz: [1300, 1350, 1400, 1450, 1500],
        errUs: [1, 1, 1, 1, 1],
      },
      rng,
    );
    const [v] = fitDmVisits(makeTable(rows), opts);
    expect(v.warnings.some((w) => /weak lever arm/.test(w))).toBe(true);
  });

  it('warns when reduced χ² is improbably large and scales the error by √χ²_red', () => {
    const rng = createRng(4);
    const rows = simulateResidualVisit(
      k,
      { source: 'X', startMjd: 60000.2, ddm: 1e-3, freqsMhz: FREQS, errUs: FREQS.map(() => 1) },
      rng,
    ).map((r) => ({ ...r, err_us: 0.05 }));
    const [v] = fitDmVisits(makeTable(rows), opts);
    expect(v.reduced_chi2!).toBeGreaterThan(10);
    expect(v.dm_err_scaled! / v.dm_err!).toBeCloseTo(Math.sqrt(v.reduced_chi2!), 12);
    expect(v.warnings.some((w) => /improbably large/.test(w))).toBe(true);
  });

  it('clips an outlier and names its row', () => {
    const rng = createRng(5);
    const rows = simulateResidualVisit(
      k,
      {
        source: 'X',
        startMjd: 60000.2,
        ddm: 1e-3,
        freqsMhz: [...FREQS, ...FREQS],
        errUs: [...FREQS, ...FREQS].map(() => 0.5),
      },
      rng,
    );
    rows[6].residual_us += 40;
    const [v] = fitDmVisits(makeTable(rows), { ...opts, clipSigma: 5 });
    expect(v.flagged_rows).toEqual([7]);
    expect(Math.abs(v.dm! - 1e-3)).toBeLessThan(4 * v.dm_err!);
    const [unclipped] = fitDmVisits(makeTable(rows), opts);
    expect(unclipped.flagged_rows).toEqual([]);
  });

  it('fits one offset per receiver, and says when DM is degenerate with them', () => {
    const rng = createRng(6);
    const freqs = [600, 700, 800, 1300, 1400, 1500];
    const receivers = ['low', 'low', 'low', 'mid', 'mid', 'mid'];
    const rows = simulateResidualVisit(
      k,
      {
        source: 'X',
        startMjd: 60000.2,
        ddm: -2e-3,
        freqsMhz: freqs,
        errUs: freqs.map(() => 0.01),
        receivers,
        receiverOffsetsUs: { low: 7, mid: -4 },
      },
      rng,
    );
    const [v] = fitDmVisits(makeTable(rows), opts);
    expect(v.receiver_offsets_us!.low).toBeCloseTo(7, 1);
    expect(v.receiver_offsets_us!.mid).toBeCloseTo(-4, 1);
    expect(Math.abs(v.dm! + 2e-3)).toBeLessThan(5 * v.dm_err!);
    // each receiver at a single frequency: DM cannot be told from the offsets
    const degenerate = rows
      .filter((_, i) => i === 0 || i === 3)
      .concat(
        rows
          .filter((_, i) => i === 0 || i === 3)
          .map((r) => ({ ...r, mjd: r.mjd.replace(/5$/, '6') })),
      );
    const [d] = fitDmVisits(makeTable(degenerate), opts);
    expect(d.status).toBe('unconstrained');
    expect(d.warnings.join()).toMatch(/cannot be separated/);
  });

  it('absorbs profile evolution with --evolution terms', () => {
    const rows = FREQS.map((f, i) => {
      const l = Math.log10(f / 1000);
      return {
        source: 'X',
        mjd: `60000.${100 + i}`,
        freq_mhz: f,
        err_us: 0.1,
        residual_us: (k.value * 1e6 * 1e-3) / f ** 2 + 2 + 5 * l - 3 * l * l,
      };
    });
    const [plain] = fitDmVisits(makeTable(rows), opts);
    const [evo] = fitDmVisits(makeTable(rows), { ...opts, evolution: 2 });
    expect(Math.abs(plain.dm! - 1e-3)).toBeGreaterThan(1e-4);
    expect(evo.dm).toBeCloseTo(1e-3, 10);
    expect(evo.evolution_us![0]).toBeCloseTo(5, 8);
    expect(evo.evolution_us![1]).toBeCloseTo(-3, 8);
  });

  it('fits absolute DM from arrival times folded modulo the period', () => {
    const period = 0.005;
    const dm = 0.8; // sweep 1200–3000 MHz = 1.9 ms < P/2 = 2.5 ms
    const t0 = parseMjd('60000.3');
    // each frequency's pulse is picked up some whole number of rotations later
    const rows = [1200, 1400, 1700, 2000, 2600, 3000].map((f, i) => ({
      source: 'X',
      mjd: formatMjd(addSeconds(t0, (k.value * dm) / f ** 2 + (i * 7 + 3) * period), 18),
      freq_mhz: f,
      err_us: 0.5,
    }));
    const [v] = fitDmVisits(makeTable(rows), { ...opts, periodS: period });
    expect(v.dm_kind).toBe('absolute');
    expect(v.dm).toBeCloseTo(dm, 6);
    // the fitted infinite-frequency arrival is t0 modulo the period
    const tInf = parseMjd(v.t_inf_mjd!);
    const dt =
      ((((tInf.day - t0.day) * 86400 + (tInf.sec - t0.sec) + (tInf.frac - t0.frac)) % period) +
        period) %
      period;
    expect(Math.min(dt, period - dt)).toBeLessThan(1e-9);
  });

  it('refuses a band sweep longer than half the period when folding', () => {
    const period = 0.002;
    const rows = [1200, 1300, 1400, 1500, 1600].map((f) => ({
      source: 'X',
      mjd: formatMjd(addSeconds(parseMjd('60000.3'), (k.value * 0.05) / f ** 2), 18),
      freq_mhz: f,
      err_us: 0.5,
    }));
    // DM 0.05 sweeps 0.063 ms across 1200–1600 MHz: fine
    expect(fitDmVisits(makeTable(rows), { ...opts, periodS: period })[0].dm).toBeCloseTo(0.05, 6);
    // DM 0.5 sweeps 0.63 ms across 1200–1600 MHz, more than half of a 1 ms period
    const wide = [1200, 1300, 1400, 1500, 1600].map((f) => ({
      source: 'X',
      mjd: formatMjd(addSeconds(parseMjd('60000.3'), (k.value * 0.5) / f ** 2), 18),
      freq_mhz: f,
      err_us: 0.5,
    }));
    expect(() => fitDmVisits(makeTable(wide), { ...opts, periodS: 0.001 })).toThrow(
      /exceeds half the period/,
    );
  });
});

describe('arrival times that cannot be trusted are not given a DM', () => {
  const k2 = dispersionConstant('conventional');
  const opts2: DmFitOptions = {
    constant: k2,
    grouping: { kind: 'gap', gapDays: 0.5 },
    evolution: 0,
  };
  const arrivals = (dm: number, freqs: number[], noise = 0) => {
    const rng = createRng(12);
    return freqs.map((f) => ({
      source: 'X',
      mjd: formatMjd(
        addSeconds(parseMjd('60000.3'), (k2.value * dm) / f ** 2 + noise * 1e-6 * rng.normal()),
        18,
      ),
      freq_mhz: f,
      err_us: 0.5,
    }));
  };

  it('refuses arrival times without residuals or a period', () => {
    expect(() => fitDmVisits(makeTable(arrivals(1, [1200, 1400, 1600])), opts2)).toThrow(
      /need the pulse period/,
    );
  });

  it('withholds a folded fit whose sweep aliases (2 and 3 periods): poor fit, or negative DM', () => {
    const freqs = [1200, 1300, 1400, 1500, 1600];
    // P = 1 ms; sweep 1200–1600 MHz at DM 1.59 ≈ 2.0 ms, at DM 2.38 ≈ 3.0 ms
    for (const dm of [1.59, 2.38]) {
      const [v] = fitDmVisits(makeTable(arrivals(dm, freqs, 0.5)), { ...opts2, periodS: 0.001 });
      if (v.status === 'fitted') {
        // only acceptable if the fold happened to be unambiguous and the DM came out right
        expect(Math.abs(v.dm! - dm)).toBeLessThan(5 * v.dm_err!);
      } else {
        expect(v.warnings.join()).toMatch(/aliased DM/);
      }
    }
    // two frequencies: the fold cannot be checked at all
    const [two] = fitDmVisits(makeTable(arrivals(0.873, [1200, 1600])), {
      ...opts2,
      periodS: 0.001,
    });
    expect(two.status).toBe('unconstrained');
    expect(two.warnings.join()).toMatch(/cannot be checked/);
  });
});
