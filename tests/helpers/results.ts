// Small, valid result documents for API tests (the server's job here is storage, state and
// comparison, not the fits; those are checked against outside references elsewhere).
import { dmFitResultSchema, type DmFitResult } from '../../shared/schemas/dm-fit.js';
import { scatterFitResultSchema, type ScatterFitResult } from '../../shared/schemas/scatter-fit.js';

const envelope = (kind: string) => ({
  schema: `sightline/${kind}@1`,
  software: { name: 'sightline', version: '0.1.0' },
  input: [{ path: 'toas.csv', sha256: 'a'.repeat(64), rows: 40 }],
});

export interface VisitSpec {
  mjd: number;
  dm: number;
  dm_err: number;
}

export function dmFit(source: string, visits: VisitSpec[], parameters = {}): DmFitResult {
  return dmFitResultSchema.parse({
    ...envelope('dm-fit'),
    parameters,
    constant: { name: 'conventional', value: 1 / 2.41e-4 },
    summary: {
      n_visits: visits.length,
      n_fitted: visits.length,
      n_unconstrained: 0,
      n_warnings: 0,
    },
    visits: visits.map((v) => ({
      source,
      mjd: v.mjd,
      mjd_first: v.mjd - 0.01,
      mjd_last: v.mjd + 0.01,
      n_toas: 10,
      n_freqs: 10,
      freq_min_mhz: 600,
      freq_max_mhz: 3000,
      status: 'fitted',
      dm: v.dm,
      dm_err: v.dm_err,
      dm_err_scaled: v.dm_err,
      dm_kind: 'absolute',
      offset_us: 0,
      chi2: 8,
      dof: 8,
      reduced_chi2: 1,
      chi2_p_value: 0.43,
      flagged_rows: [],
      warnings: [],
    })),
  });
}

/** A quiet pulsar's visits: DM 21.36 with small wiggles, σ = 1e-4. */
export function quietFit(source = 'SBP-B', shift = 0, n = 6): DmFitResult {
  return dmFit(
    source,
    Array.from({ length: n }, (_, i) => ({
      mjd: 60200 + 14 * i,
      dm: 21.36 + 1e-5 * Math.sin(i) + shift,
      dm_err: 1e-4,
    })),
  );
}

export function scatterFit(source: string, taus: [number, number, number][]): ScatterFitResult {
  return scatterFitResultSchema.parse({
    ...envelope('scatter-fit'),
    source,
    mjd: '60214.5',
    period_s: 0.00562,
    nbin: 512,
    model: 'gauss',
    dm: 118.7,
    bands: taus.map(([freq, tau, err]) => ({
      freq_mhz: freq,
      status: 'fitted',
      tau_us: tau,
      tau_err_us: err,
      chi2: 500,
      dof: 508,
      reduced_chi2: 0.98,
      snr: 80,
      noise: 0.01,
      noise_estimated: true,
      params: {},
      param_errors: {},
      iterations: 12,
      warnings: [],
    })),
    power_law: null,
    expected_tau_us: null,
    expected: null,
    warnings: [],
  });
}
