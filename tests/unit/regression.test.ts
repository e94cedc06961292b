import { describe, expect, it } from 'vitest';
import {
  CompareError,
  type DmSeriesLike,
  type ScatterFitLike,
} from '../../shared/review/compare.js';
import { checkRegression, sourcesOf } from '../../shared/review/regression.js';
import {
  baselineCheckRequestSchema,
  baselineCheckResponseSchema,
  regressionResultSchema,
} from '../../shared/schemas/review.js';
import { dmFit, visit } from '../helpers/comparable.js';

// deviation = (new − baseline) / σ_baseline with binary-exact numbers, so the pass/fail edge at
// the tolerance is exact (arithmetic); |deviation| ≤ tolerance passes (the check's definition).

describe('regression check against a baseline', () => {
  it("divides by the baseline's own error, not the two errors in quadrature", () => {
    const base = dmFit([visit('SBP-A', 60000, 1, 0.25)]);
    // the new fit quotes a very different error: it must not enter the deviation
    const fresh = dmFit([visit('SBP-A', 60000.001, 1.5, 10)]);
    const r = checkRegression(base, fresh, { toleranceSigma: 3 });
    expect(r.items).toEqual([
      {
        source: 'SBP-A',
        kind: 'dm-fit',
        key: 'SBP-A MJD 60000',
        quantity: 'dm',
        baseline: 1,
        value: 1.5,
        sigma: 0.25,
        deviation_sigma: 2, // (1.5 − 1) / 0.25
        pass: true,
      },
    ]);
    expect(r).toMatchObject({ pass: true, n_items: 1, n_failed: 0 });
    expect(() => regressionResultSchema.parse(r)).not.toThrow();
  });

  it('passes at exactly the tolerance and fails just beyond it, in either direction', () => {
    const base = dmFit([visit('SBP-A', 60000, 1, 0.25)]);
    const at = (dm: number) =>
      checkRegression(base, dmFit([visit('SBP-A', 60000, dm, 0.25)]), { toleranceSigma: 3 });
    expect(at(1.75).items[0]).toMatchObject({ deviation_sigma: 3, pass: true });
    expect(at(0.25).items[0]).toMatchObject({ deviation_sigma: -3, pass: true });
    const over = at(1.75 + 2 ** -40);
    expect(over.pass).toBe(false);
    expect(over.n_failed).toBe(1);
    expect(over.items[0].reason).toBe('moved 3.00σ, beyond ±3σ');
    expect(at(0.25 - 2 ** -40).pass).toBe(false);
    // a looser tolerance lets the same move through
    expect(
      checkRegression(base, dmFit([visit('SBP-A', 60000, 2, 0.25)]), { toleranceSigma: 4 }).pass,
    ).toBe(true);
  });

  it('a baseline visit missing from the new result fails; a new visit is informational', () => {
    const base = dmFit([visit('SBP-A', 60000, 1, 0.25), visit('SBP-A', 60010, 1, 0.25)]);
    const fresh = dmFit([visit('SBP-A', 60000, 1, 0.25), visit('SBP-A', 60020, 1, 0.25)]);
    const r = checkRegression(base, fresh, { toleranceSigma: 3 });
    expect(r.items.map((i) => [i.key, i.quantity, i.pass, i.reason])).toEqual([
      ['SBP-A MJD 60000', 'dm', true, undefined],
      ['SBP-A MJD 60010', 'presence', false, 'missing'],
      ['SBP-A MJD 60020', 'presence', true, 'new'],
    ]);
    expect(r).toMatchObject({ pass: false, n_items: 3, n_failed: 1 });
  });

  it('fitted in the baseline but unconstrained now fails; unconstrained in the baseline does not', () => {
    const base = dmFit([visit('SBP-B', 60000, 1, 0.25), visit('SBP-B', 60001, null, null)]);
    const fresh = dmFit([visit('SBP-B', 60000, null, null), visit('SBP-B', 60001, 1, 0.25)]);
    const r = checkRegression(base, fresh, { toleranceSigma: 3 });
    expect(r.items).toEqual([
      expect.objectContaining({
        quantity: 'status',
        pass: false,
        reason: 'not fitted: unconstrained (baseline: fitted)',
        deviation_sigma: null,
      }),
      expect.objectContaining({
        quantity: 'status',
        pass: true,
        reason: 'fitted now (baseline: unconstrained)',
      }),
    ]);
    expect(r.n_failed).toBe(1);
  });

  it('checks τ of chromatic fits and fails when the new fit lost it', () => {
    const chrom = (dm: number, tau: number) =>
      visit('SBP-E', 60100, dm, 0.5, { tau_ref_us: tau, tau_ref_err_us: 0.5, ref_freq_mhz: 1400 });
    const r = checkRegression(dmFit([chrom(2, 1)]), dmFit([chrom(2, 3)]), { toleranceSigma: 3 });
    expect(r.items.map((i) => [i.quantity, i.deviation_sigma, i.pass])).toEqual([
      ['dm', 0, true],
      ['tau_ref_us', 4, false], // (3 − 1) / 0.5
    ]);
    const lost = checkRegression(dmFit([chrom(2, 1)]), dmFit([visit('SBP-E', 60100, 2, 0.5)]), {
      toleranceSigma: 3,
    });
    expect(lost.items[1]).toMatchObject({ quantity: 'tau_ref_us', pass: false, reason: 'missing' });
  });

  it('checks one source of a many-source result when asked, and lists the sources', () => {
    const base = dmFit([visit('SBP-A', 60000, 1, 0.25), visit('SBP-C', 60000, 1, 0.25)]);
    const fresh = dmFit([visit('SBP-A', 60000, 1, 0.25), visit('SBP-C', 60000, 9, 0.25)]);
    expect(sourcesOf(base)).toEqual(['SBP-A', 'SBP-C']);
    expect(checkRegression(base, fresh, { toleranceSigma: 3, source: 'SBP-A' }).pass).toBe(true);
    expect(checkRegression(base, fresh, { toleranceSigma: 3, source: 'SBP-C' }).pass).toBe(false);
    expect(checkRegression(base, fresh, { toleranceSigma: 3 }).n_failed).toBe(1);
  });

  it('dm-series points are checked like visits', () => {
    const series = (dm: number): DmSeriesLike => ({
      schema: 'sightline/dm-series@1',
      points: [{ source: 'SBP-F', mjd: 60000, dm, dm_err: 0.125 }],
    });
    const r = checkRegression(series(1), series(1.5), { toleranceSigma: 3 });
    expect(r.items[0]).toMatchObject({ kind: 'dm-series', deviation_sigma: 4, pass: false });
  });

  it('scatter fits: a band that became an upper limit fails; a fixed α must come back exactly', () => {
    const scatter = (status: string, alpha: number, alphaErr: number | null): ScatterFitLike => ({
      schema: 'sightline/scatter-fit@1',
      source: 'SBP-D',
      bands: [
        { freq_mhz: 700, tau_us: 8, tau_err_us: 2, status: 'fitted' },
        { freq_mhz: 1400, tau_us: 1, tau_err_us: 0.25, status },
      ],
      power_law: {
        ref_freq_mhz: 1000,
        tau_ref_us: 3,
        tau_ref_err_us: 0.5,
        alpha,
        alpha_err: alphaErr,
        alpha_fixed: alphaErr === null,
      },
    });
    const ok = checkRegression(scatter('fitted', 4.4, null), scatter('fitted', 4.4, null), {
      toleranceSigma: 3,
    });
    expect(ok.pass).toBe(true);
    expect(ok.items.map((i) => [i.key, i.quantity])).toEqual([
      ['SBP-D 700 MHz', 'tau_us'],
      ['SBP-D 1400 MHz', 'tau_us'],
      ['SBP-D power law', 'tau_ref_us'],
      ['SBP-D power law', 'alpha'],
    ]);
    const bad = checkRegression(scatter('fitted', 4.4, null), scatter('upper_limit', 4, 0.1), {
      toleranceSigma: 3,
    });
    expect(bad.items.filter((i) => !i.pass).map((i) => [i.quantity, i.reason])).toEqual([
      ['status', 'not fitted: upper_limit (baseline: fitted)'],
      ['alpha', 'baseline held it fixed: must match exactly'],
    ]);
  });

  it('refuses a kind mismatch and a tolerance that is not positive', () => {
    const series: DmSeriesLike = { schema: 'sightline/dm-series@1', points: [] };
    expect(() => checkRegression(dmFit([]), series, { toleranceSigma: 3 })).toThrow(CompareError);
    expect(() => checkRegression(dmFit([]), dmFit([]), { toleranceSigma: 0 })).toThrow(RangeError);
    expect(() => checkRegression(dmFit([]), dmFit([]), { toleranceSigma: NaN })).toThrow(
      RangeError,
    );
  });
});

describe('baseline-check request and response schemas', () => {
  const minimalDmFit = {
    schema: 'sightline/dm-fit@1',
    software: { name: 'sightline', version: '0.1.0' },
    input: [],
    constant: { name: 'conventional', value: 4.148808e3 },
    summary: { n_visits: 0, n_fitted: 0, n_unconstrained: 0, n_warnings: 0 },
    visits: [],
  };

  it('tolerance defaults to 3σ and must be positive; results must be known result JSON', () => {
    expect(baselineCheckRequestSchema.parse({ results: [minimalDmFit] }).tolerance_sigma).toBe(3);
    expect(
      baselineCheckRequestSchema.safeParse({ tolerance_sigma: 0, results: [minimalDmFit] }).success,
    ).toBe(false);
    expect(baselineCheckRequestSchema.safeParse({ results: [] }).success).toBe(false);
    const bad = baselineCheckRequestSchema.safeParse({
      results: [{ ...minimalDmFit, schema: 'sightline/delay@1' }],
    });
    expect(bad.success).toBe(false);
  });

  it('the response schema accepts a check and rejects an unknown status', () => {
    const response = {
      schema: 'sightline/baseline-check@1',
      tolerance_sigma: 3,
      pass: true,
      results: [
        {
          source: 'SBP-A',
          kind: 'dm-fit',
          status: 'no_baseline',
          baseline_run_id: null,
          n_failed: 0,
          items: [],
        },
      ],
    };
    expect(baselineCheckResponseSchema.safeParse(response).success).toBe(true);
    response.results[0].status = 'maybe';
    expect(baselineCheckResponseSchema.safeParse(response).success).toBe(false);
  });
});
