import type { ProfileSet } from './types.js';
import { fitProfileBand, type BandFit, type ScatterModelName } from './scatter-fit.js';
import { fitPowerLaw, type PowerLawFit } from './power-law.js';
import { expectedTauUs, TAU_DM_RANGE, TAU_DM_SCATTER_DEX } from './empirical.js';
import type { ScatterBand, ScatterFitResult } from '../schemas/scatter-fit.js';

export interface ScatterOptions {
  model: ScatterModelName;
  /** template bins for model "template" */
  template?: ArrayLike<number>;
  /** α held fixed; undefined = fitted */
  alpha?: number;
  refFreqMhz: number;
  /** DM for the empirical τ–DM comparison (else the profile set's own) */
  dm?: number;
}

type ScatterBody = Omit<
  ScatterFitResult,
  'schema' | 'software' | 'input' | 'created_utc' | 'parameters' | 'cautions'
>;

/** τ per band, the τ(ν) power law over the constrained bands, and the empirical expectation. */
export function analyseScattering(set: ProfileSet, opts: ScatterOptions): ScatterBody {
  const nbin = set.bands[0].bins.length;
  const usPerBin = (set.periodS * 1e6) / nbin;
  const warnings: string[] = [];
  const bands: ScatterBand[] = set.bands.map((b) => {
    let fit: BandFit;
    try {
      fit = fitProfileBand(b.bins, { model: opts.model, template: opts.template, noise: b.noise });
    } catch (e) {
      // a band that cannot be fitted (e.g. absurd values) fails alone, the others go on
      if (e instanceof RangeError && /template/.test(e.message)) throw e;
      return failedBand(b.freqMhz, e instanceof Error ? e.message : String(e));
    }
    const tauUs = fit.tauBins * usPerBin;
    // an upper limit's curvature error says nothing (τ and the pulse centre are degenerate near
    // zero): the limit itself is the statement
    const tauErrUs =
      fit.status === 'fitted' && Number.isFinite(fit.tauErrBins) ? fit.tauErrBins * usPerBin : null;
    const band: ScatterBand = {
      freq_mhz: b.freqMhz,
      status: fit.status,
      tau_us: tauUs,
      tau_err_us: tauErrUs,
      chi2: fit.chi2,
      dof: fit.dof,
      reduced_chi2: Number.isFinite(fit.reducedChi2) ? fit.reducedChi2 : null,
      snr: fit.snr,
      noise: fit.noise,
      noise_estimated: fit.noiseEstimated,
      params: Object.fromEntries(fit.names.map((name, j) => [name, fit.params[j]])),
      param_errors: Object.fromEntries(
        fit.names.map((name, j) => [name, Number.isFinite(fit.errors[j]) ? fit.errors[j] : null]),
      ),
      iterations: fit.iterations,
      warnings: fit.warnings,
    };
    if (fit.status === 'upper_limit' && fit.tauUpperBins !== undefined)
      band.tau_upper_us = fit.tauUpperBins * usPerBin;
    return band;
  });
  const constrained = bands.filter(
    (b) => b.status === 'fitted' && b.tau_err_us !== null && b.tau_err_us > 0,
  );
  let powerLaw: PowerLawFit | null = null;
  if (opts.alpha === undefined && set.bands.length < 2) {
    throw new RangeError(
      'α cannot be fitted from a single band: give profiles in two or more bands, or fix α with --alpha 4.4',
    );
  }
  try {
    powerLaw = fitPowerLaw(
      constrained.map((b) => ({ freqMhz: b.freq_mhz, tauUs: b.tau_us, tauErrUs: b.tau_err_us! })),
      opts.refFreqMhz,
      opts.alpha,
    );
  } catch (e) {
    if (!(e instanceof RangeError)) throw e;
    warnings.push(`no τ(ν) power law: ${e.message}`);
  }
  if (powerLaw) {
    const below = bands.filter(
      (b) =>
        b.status === 'upper_limit' &&
        b.tau_upper_us !== undefined &&
        b.tau_upper_us <
          powerLaw!.tau_ref_us * (b.freq_mhz / powerLaw!.ref_freq_mhz) ** -powerLaw!.alpha,
    );
    if (below.length) {
      warnings.push(
        `the upper limit(s) at ${below.map((b) => `${b.freq_mhz} MHz`).join(', ')} lie below the fitted power law: it is not consistent with every band`,
      );
    }
  }
  const dm = opts.dm ?? set.dm ?? null;
  let expected: ScatterBody['expected'] = null;
  const tauDm = dm === null ? NaN : expectedTauUs(dm, opts.refFreqMhz);
  if (dm !== null && dm > 0 && !(dm >= TAU_DM_RANGE.min && dm <= TAU_DM_RANGE.max)) {
    warnings.push(
      `no τ expected from the τ–DM relation: DM ${dm.toPrecision(4)} is outside the ${TAU_DM_RANGE.min}–${TAU_DM_RANGE.max} pc cm⁻³ it was fitted over`,
    );
  } else if (dm !== null && dm > 0 && Number.isFinite(tauDm) && tauDm > 0) {
    const tau = tauDm;
    expected = {
      relation: 'Bhat et al. 2004 (ApJ 605, 759)',
      dm,
      freq_mhz: opts.refFreqMhz,
      tau_us: tau,
      scatter_dex: TAU_DM_SCATTER_DEX,
    };
    if (powerLaw && Math.abs(Math.log10(powerLaw.tau_ref_us / tau)) > TAU_DM_SCATTER_DEX) {
      warnings.push(
        `τ at ${opts.refFreqMhz} MHz (${powerLaw.tau_ref_us.toPrecision(3)} µs) differs from the empirical τ–DM relation (${tau.toPrecision(3)} µs) by more than its ${TAU_DM_SCATTER_DEX} dex scatter`,
      );
    }
  }
  if (powerLaw && !powerLaw.alpha_fixed && powerLaw.alpha_err !== null && powerLaw.n_bands >= 2) {
    if (powerLaw.alpha < 2 || powerLaw.alpha > 6)
      warnings.push(
        `α = ${powerLaw.alpha.toFixed(2)} is far from the 4–4.4 expected of a turbulent medium: check the fits`,
      );
  }
  return {
    source: set.source,
    mjd: set.mjd,
    period_s: set.periodS,
    nbin,
    model: opts.model,
    dm,
    bands,
    power_law: powerLaw,
    expected_tau_us: expected ? expected.tau_us : null,
    expected,
    warnings,
  };
}

function failedBand(freqMhz: number, reason: string): ScatterBand {
  return {
    freq_mhz: freqMhz,
    status: 'failed',
    tau_us: 0,
    tau_err_us: null,
    chi2: 0,
    dof: 0,
    reduced_chi2: null,
    snr: 0,
    noise: 0,
    noise_estimated: true,
    params: {},
    param_errors: {},
    iterations: 0,
    warnings: [`the fit failed: ${reason}`],
  };
}
