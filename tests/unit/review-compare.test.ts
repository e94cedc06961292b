import { describe, expect, expectTypeOf, it } from 'vitest';
import { fitDmVisits } from '../../shared/fit/dm-fit.js';
import { dispersionConstant } from '../../shared/physics/constants.js';
import {
  type ComparableResult,
  CompareError,
  compareResults,
  matchOneToOne,
  type DmFitLike,
  type DmSeriesLike,
  type ScatterFitLike,
} from '../../shared/review/compare.js';
import { compareResultSchema, type ComparableResultJson } from '../../shared/schemas/review.js';
import { makeTable } from '../helpers/toas.js';
import { dmFit, visit } from '../helpers/comparable.js';

// Hand-built results with binary-exact numbers (0.5, 0.625, …) so Δ, σ and z are known exactly;
// σ = √(σ_a² + σ_b²) is the usual quadrature sum of independent errors (common practice).

describe('compare two dm-fit runs', () => {
  it('Δ = b − a, σ in quadrature (dm_err_scaled ?? dm_err), z = Δ/σ, with exact numbers', () => {
    const a = dmFit([visit('SBP-A', 60000.25, 0.5, 0.03, { dm_err: 0.01 })]);
    const b = dmFit([visit('SBP-A', 60000.3, 0.625, null, { dm_err: 0.04 })]);
    const r = compareResults(a, b);
    expect(r.kind).toBe('dm-fit');
    expect(r.items).toHaveLength(1);
    const it0 = r.items[0];
    expect(it0).toMatchObject({
      key: 'SBP-A MJD 60000.25',
      source: 'SBP-A',
      mjd: 60000.25,
      quantity: 'dm',
      a: 0.5,
      a_err: 0.03, // the scaled error wins over dm_err = 0.01
      b: 0.625,
      b_err: 0.04, // no scaled error: falls back to dm_err
      delta: 0.125,
    });
    // 3-4-5 triangle: √(0.03² + 0.04²) = 0.05 (arithmetic), z = 0.125 / 0.05 = 2.5
    expect(it0.sigma).toBeCloseTo(0.05, 15);
    expect(it0.z).toBeCloseTo(2.5, 12);
    expect(r.summary).toMatchObject({ n_matched: 1, n_a_only: 0, n_b_only: 0, n_over_3sigma: 0 });
    expect(r.summary.moved).toHaveLength(1);
    // the delta is shown to two significant figures
    expect(r.summary.moved[0].text).toBe('SBP-A MJD 60000.25: DM moved +2.5σ (+0.13)');
    expect(() => compareResultSchema.parse(r)).not.toThrow();
  });

  it('a negative move reads with a minus sign and the delta to two significant figures', () => {
    const a = dmFit([visit('SBP-B', 60214.3, 1.5, 0.0003)]);
    const b = dmFit([visit('SBP-B', 60214.3, 1.5 - 0.00062, 0.0004)]);
    const r = compareResults(a, b);
    expect(r.items[0].z).toBeCloseTo(-0.00062 / 0.0005, 9);
    expect(r.summary.moved[0].text).toBe('SBP-B MJD 60214.3: DM moved -1.2σ (-0.00062)');
  });

  it('summary: max |z|, rms z, count beyond 3σ, top 10 moves largest first', () => {
    // 12 visits with σ = √(0.3² + 0.4²) = 0.5 and Δ = z/2 for z = −6 … 5
    const zs = [-6, -5, -4, -3, -2, -1, 0, 1, 2, 3, 4, 5];
    const a = dmFit(zs.map((_, i) => visit('SBP-C', 60000 + i, 10, 0.3)));
    const b = dmFit(zs.map((z, i) => visit('SBP-C', 60000 + i, 10 + z / 2, 0.4)));
    const r = compareResults(a, b);
    expect(r.items.map((x) => x.z)).toEqual(zs.map((z) => expect.closeTo(z, 12)));
    expect(r.summary.max_abs_z).toBeCloseTo(6, 12);
    // rms = √(Σz²/12) = √(146/12) (arithmetic)
    expect(r.summary.rms_z).toBeCloseTo(Math.sqrt(146 / 12), 12);
    expect(r.summary.n_over_3sigma).toBe(5); // |z| > 3: −6, −5, −4, 4, 5 (strict: ±3 are not over)
    expect(r.summary.moved).toHaveLength(10);
    expect(r.summary.moved.map((m) => Math.round(m.z))).toEqual([
      -6, -5, 5, -4, 4, -3, 3, -2, 2, -1,
    ]);
  });

  it('visits farther apart than the tolerance (or exactly at it), or of another source, stay apart', () => {
    const a = dmFit([
      visit('SBP-A', 60010, 1, 0.1),
      visit('SBP-A', 60020, 1, 0.1),
      visit('SBP-A', 60030, 1, 0.1),
    ]);
    const b = dmFit([
      visit('SBP-A', 60010.625, 1, 0.1), // 0.625 d > 0.5
      visit('SBP-A', 60020.5, 1, 0.1), // exactly 0.5: tolerance is strict (< 0.5)
      visit('SBP-D', 60030, 1, 0.1), // same epoch, other source
    ]);
    const r = compareResults(a, b);
    expect(r.items).toEqual([]);
    expect(r.a_only).toEqual(['SBP-A MJD 60010', 'SBP-A MJD 60020', 'SBP-A MJD 60030']);
    expect(r.b_only).toEqual(['SBP-A MJD 60010.625', 'SBP-A MJD 60020.5', 'SBP-D MJD 60030']);
    expect(r.summary).toMatchObject({
      n_matched: 0,
      n_a_only: 3,
      n_b_only: 3,
      max_abs_z: null,
      rms_z: null,
    });
    // a wider tolerance joins the first two, never the other source
    const wide = compareResults(a, b, { mjdToleranceDays: 0.7 });
    expect(wide.summary).toMatchObject({ n_matched: 2, n_a_only: 1, n_b_only: 1 });
  });

  it('matches one to one, nearest first', () => {
    // A 0.0, 0.3; B 0.2: the nearer A (0.3, |Δ| = 0.1) takes B; A 0.0 is left over
    const r1 = compareResults(
      dmFit([visit('SBP-A', 60000, 1, 0.1), visit('SBP-A', 60000.3, 2, 0.1)]),
      dmFit([visit('SBP-A', 60000.2, 2, 0.1)]),
    );
    expect(r1.items.map((x) => x.key)).toEqual(['SBP-A MJD 60000.3']);
    expect(r1.a_only).toEqual(['SBP-A MJD 60000']);
    // B 0.2 and 0.1 for one A at 0.0: the nearer B (0.1) wins, 0.2 is B only
    const r2 = compareResults(
      dmFit([visit('SBP-A', 60000, 1, 0.1)]),
      dmFit([visit('SBP-A', 60000.2, 7, 0.1), visit('SBP-A', 60000.1, 1, 0.1)]),
    );
    expect(r2.items).toHaveLength(1);
    expect(r2.items[0].b).toBe(1);
    expect(r2.b_only).toEqual(['SBP-A MJD 60000.2']);
    // no entity is used twice: one B between two As gives one pair
    const m = matchOneToOne(
      [
        { group: 'g', coord: 0 },
        { group: 'g', coord: 0.3 },
      ],
      [
        { group: 'g', coord: 0.2 },
        { group: 'g', coord: 0.45 },
      ],
      0.5,
    );
    // candidates by distance: (1,0) 0.1, (1,1) 0.15, (0,0) 0.2, (0,1) 0.45 → (1,0) then (0,1)
    expect(m.pairs).toEqual([
      [0, 1],
      [1, 0],
    ]);
    expect(m.aOnly).toEqual([]);
    expect(m.bOnly).toEqual([]);
  });

  it('unconstrained visits are matched but not compared, and say why', () => {
    const a = dmFit([visit('SBP-A', 60000, 1, 0.1), visit('SBP-A', 60001, null, null)]);
    const b = dmFit([visit('SBP-A', 60000, null, null), visit('SBP-A', 60001, null, null)]);
    const r = compareResults(a, b);
    expect(r.items).toEqual([]);
    expect(r.summary.n_matched).toBe(2);
    expect(r.not_compared).toEqual([
      'SBP-A MJD 60000: unconstrained in B',
      'SBP-A MJD 60001: unconstrained in A, unconstrained in B',
    ]);
  });

  it('chromatic fits also compare τ at the reference frequency; not across reference frequencies', () => {
    const chrom = (dm: number, tau: number, tauErr: number, ref = 1400) =>
      visit('SBP-E', 60100, dm, 0.5, {
        tau_ref_us: tau,
        tau_ref_err_us: tauErr,
        ref_freq_mhz: ref,
      });
    const r = compareResults(dmFit([chrom(2, 1, 0.6)]), dmFit([chrom(2.5, 3, 0.8)]));
    expect(r.items.map((x) => x.quantity)).toEqual(['dm', 'tau_ref_us']);
    const tau = r.items[1];
    expect(tau.delta).toBe(2);
    expect(tau.sigma).toBeCloseTo(1, 15); // √(0.6² + 0.8²) = 1
    expect(tau.z).toBeCloseTo(2, 14);
    expect(r.summary.moved[0].text).toBe('SBP-E MJD 60100: τ_ref moved +2.0σ (+2 µs)');

    const other = compareResults(dmFit([chrom(2, 1, 0.6)]), dmFit([chrom(2, 3, 0.8, 1000)]));
    expect(other.items.map((x) => x.quantity)).toEqual(['dm']);
    expect(other.not_compared).toEqual([
      'SBP-E MJD 60100: τ reference frequencies differ (1400 vs 1000 MHz)',
    ]);
    // τ in only one run is reported, not compared
    const one = compareResults(dmFit([chrom(2, 1, 0.6)]), dmFit([visit('SBP-E', 60100, 2, 0.5)]));
    expect(one.not_compared).toEqual(['SBP-E MJD 60100: τ_ref only in A']);
  });

  it('absolute DMs are not compared with DM offsets', () => {
    const r = compareResults(
      dmFit([visit('SBP-A', 60000, 1, 0.1)]),
      dmFit([visit('SBP-A', 60000, 0.001, 0.1, { dm_kind: 'offset' })]),
    );
    expect(r.items).toEqual([]);
    expect(r.not_compared).toEqual([
      'SBP-A MJD 60000: DM is absolute in one and offset in the other',
    ]);
  });

  it('z is null, not infinite, when both errors are zero', () => {
    const r = compareResults(
      dmFit([visit('SBP-A', 60000, 1, 0)]),
      dmFit([visit('SBP-A', 60000, 2, 0)]),
    );
    expect(r.items[0]).toMatchObject({ delta: 1, sigma: 0, z: null });
    expect(r.summary).toMatchObject({ max_abs_z: null, rms_z: null, moved: [] });
    expect(() => compareResultSchema.parse(r)).not.toThrow();
  });
});

describe('compare dm-series and scatter-fit runs', () => {
  it('dm-series points match by source and MJD, quantity dm', () => {
    const series = (pts: [string, number, number, number][]): DmSeriesLike => ({
      schema: 'sightline/dm-series@1',
      points: pts.map(([source, mjd, dm, dm_err]) => ({ source, mjd, dm, dm_err })),
    });
    const r = compareResults(
      series([
        ['SBP-A', 60000, 3, 0.3],
        ['SBP-A', 60007, 3, 0.3],
      ]),
      series([
        ['SBP-A', 60000.125, 2, 0.4],
        ['SBP-F', 60007, 3, 0.3],
      ]),
    );
    expect(r.kind).toBe('dm-series');
    expect(r.items).toHaveLength(1);
    expect(r.items[0]).toMatchObject({ quantity: 'dm', delta: -1, mjd: 60000 });
    expect(r.items[0].z).toBeCloseTo(-2, 14);
    expect(r.a_only).toEqual(['SBP-A MJD 60007']);
    expect(r.b_only).toEqual(['SBP-F MJD 60007']);
  });

  const band = (
    freq_mhz: number,
    tau_us: number,
    tau_err_us: number | null,
    status = 'fitted',
  ) => ({
    freq_mhz,
    tau_us,
    tau_err_us,
    status,
  });
  const scatter = (
    bands: ReturnType<typeof band>[],
    power_law: ScatterFitLike['power_law'],
    source = 'SBP-D',
  ): ScatterFitLike => ({ schema: 'sightline/scatter-fit@1', source, bands, power_law });
  const pl = (alpha: number, alpha_err: number | null, tau: number, tauErr: number) => ({
    ref_freq_mhz: 1000,
    tau_ref_us: tau,
    tau_ref_err_us: tauErr,
    alpha,
    alpha_err,
    alpha_fixed: alpha_err === null,
  });

  it('bands match by frequency within 0.5 MHz; upper limits and missing errors are skipped', () => {
    const a = scatter(
      [
        band(700, 10, 3),
        band(1000, 4, 1),
        band(1400, 1, null),
        band(2000, 0.2, 0.1, 'upper_limit'),
      ],
      pl(4, 0.5, 4, 1),
    );
    const b = scatter(
      [band(700.25, 14, 4), band(1000.5, 4, 1), band(1400, 1.5, 0.5), band(2000, 0.3, 0.1)],
      pl(3, 0.5, 5, 1),
    );
    const r = compareResults(a, b);
    expect(r.kind).toBe('scatter-fit');
    const tauItems = r.items.filter((x) => x.quantity === 'tau_us');
    expect(tauItems).toHaveLength(1);
    expect(tauItems[0]).toMatchObject({ key: 'SBP-D 700 MHz', freq_mhz: 700, delta: 4 });
    expect(tauItems[0].z).toBeCloseTo(0.8, 14); // 4 / √(3² + 4²)
    expect(r.a_only).toEqual(['SBP-D 1000 MHz']); // 0.5 MHz apart: not matched (strict)
    expect(r.b_only).toEqual(['SBP-D 1000.5 MHz']);
    expect(r.not_compared).toEqual([
      'SBP-D 1400 MHz: τ has no error in A',
      'SBP-D 2000 MHz: upper_limit in A',
    ]);
    const alpha = r.items.find((x) => x.quantity === 'alpha');
    expect(alpha).toMatchObject({ key: 'SBP-D power law', a: 4, b: 3, delta: -1 });
    expect(alpha?.z).toBeCloseTo(-1 / Math.SQRT2 / 0.5, 12);
    const tauRef = r.items.find((x) => x.quantity === 'tau_ref_us');
    expect(tauRef?.delta).toBe(1);
    expect(r.summary.n_matched).toBe(4); // 700, 1400, 2000 and the power law
  });

  it('a fixed α is reported as fixed, a power law in one run only as one-sided', () => {
    const r = compareResults(
      scatter([band(700, 10, 3)], pl(4.4, null, 4, 1)),
      scatter([band(700, 10, 3)], pl(4, 0.2, 4, 1)),
    );
    expect(r.not_compared).toEqual(['SBP-D power law: α fixed in A']);
    const one = compareResults(
      scatter([band(700, 10, 3)], pl(4, 0.2, 4, 1)),
      scatter([band(700, 10, 3)], null),
    );
    expect(one.a_only).toEqual(['SBP-D power law']);
  });

  it('scatter fits of two different sources share nothing', () => {
    const r = compareResults(
      scatter([band(700, 10, 3)], null, 'SBP-D'),
      scatter([band(700, 10, 3)], null, 'SBP-E'),
    );
    expect(r.summary).toMatchObject({ n_matched: 0, n_a_only: 1, n_b_only: 1 });
  });
});

describe('compare refuses what it cannot compare', () => {
  it('throws a CompareError with code kind_mismatch when the kinds differ', () => {
    const series: DmSeriesLike = { schema: 'sightline/dm-series@1', points: [] };
    let caught: unknown;
    try {
      compareResults(dmFit([]), series);
    } catch (e) {
      caught = e;
    }
    expect(caught).toBeInstanceOf(CompareError);
    expect(caught).toBeInstanceOf(Error);
    expect((caught as CompareError).code).toBe('kind_mismatch');
    expect((caught as CompareError).message).toMatch(/dm-fit.*dm-series/);
  });

  it('throws unsupported_kind for other schemas', () => {
    const delay = { schema: 'sightline/delay@1' } as unknown as DmFitLike;
    expect(() => compareResults(delay, delay)).toThrow(
      expect.objectContaining({ code: 'unsupported_kind' }),
    );
  });
});

describe('compare on real fit output', () => {
  it('accepts every validated result JSON (checked by tsc)', () => {
    expectTypeOf<ComparableResultJson>().toExtend<ComparableResult>();
  });

  it('the same data fitted twice matches every visit with Δ = 0; a shifted DM shows up as its z', () => {
    const k = dispersionConstant('conventional');
    const freqs = [700, 800, 1400, 1600, 3000];
    // residuals of a DM offset d: K·d/ν² µs (K in MHz² s; cold-plasma dispersion, from memory)
    const rows = (d: number) =>
      [0, 14, 28].flatMap((day) =>
        freqs.map((f, i) => ({
          source: 'SBP-A',
          mjd: `${60000 + day}.${String(i).padStart(3, '0')}`,
          freq_mhz: f,
          err_us: 0.5,
          residual_us: (k.value * 1e6 * d) / f ** 2 + (i % 2 ? 0.3 : -0.3),
        })),
      );
    const opts = { constant: k, grouping: { kind: 'gap' as const, gapDays: 0.5 }, evolution: 0 };
    const a = dmFit(fitDmVisits(makeTable(rows(1e-3)), opts));
    const same = compareResults(a, dmFit(fitDmVisits(makeTable(rows(1e-3)), opts)));
    expect(same.summary).toMatchObject({ n_matched: 3, n_a_only: 0, n_b_only: 0, max_abs_z: 0 });
    const moved = compareResults(a, dmFit(fitDmVisits(makeTable(rows(2e-3)), opts)));
    for (const item of moved.items) {
      expect(item.delta).toBeCloseTo(1e-3, 9); // the injected shift, recovered by a linear fit
      expect(item.z).toBeCloseTo(1e-3 / Math.hypot(item.a_err, item.b_err), 6);
    }
  });
});
