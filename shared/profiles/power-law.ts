import { weightedLine, SingularDesignError } from '../fit/wls.js';

export interface TauPoint {
  freqMhz: number;
  tauUs: number;
  tauErrUs: number;
}

export interface PowerLawFit {
  ref_freq_mhz: number;
  tau_ref_us: number;
  tau_ref_err_us: number;
  alpha: number;
  /** null when α was held fixed */
  alpha_err: number | null;
  alpha_fixed: boolean;
  n_bands: number;
  chi2: number;
  dof: number;
  reduced_chi2: number | null;
}

/**
 * τ(ν) = τ_ref (ν/ν_ref)^−α by weighted least squares in log space:
 * ln τ = ln τ_ref − α ln(ν/ν_ref), with σ(ln τ) = σ_τ/τ. Errors are scaled by √χ²_red when it
 * exceeds 1 (common practice). With α fixed only τ_ref is fitted.
 */
export function fitPowerLaw(
  points: TauPoint[],
  refFreqMhz: number,
  fixedAlpha?: number,
): PowerLawFit {
  const n = points.length;
  const x = points.map((p) => Math.log(p.freqMhz / refFreqMhz));
  const y = points.map((p) => Math.log(p.tauUs));
  const s = points.map((p) => p.tauErrUs / p.tauUs);
  if (fixedAlpha !== undefined) {
    if (n < 1) throw new RangeError('no band with a constrained τ');
    let sw = 0;
    let swy = 0;
    for (let i = 0; i < n; i++) {
      const w = 1 / (s[i] * s[i]);
      sw += w;
      swy += w * (y[i] + fixedAlpha * x[i]);
    }
    const a = swy / sw;
    let chi2 = 0;
    for (let i = 0; i < n; i++) chi2 += ((y[i] + fixedAlpha * x[i] - a) / s[i]) ** 2;
    const dof = n - 1;
    const red = dof > 0 ? chi2 / dof : null;
    const scale = red !== null && red > 1 ? Math.sqrt(red) : 1;
    const tauRef = Math.exp(a);
    return {
      ref_freq_mhz: refFreqMhz,
      tau_ref_us: tauRef,
      tau_ref_err_us: tauRef * Math.sqrt(1 / sw) * scale,
      alpha: fixedAlpha,
      alpha_err: null,
      alpha_fixed: true,
      n_bands: n,
      chi2,
      dof,
      reduced_chi2: red,
    };
  }
  if (n < 2) {
    throw new RangeError(
      `α needs τ in at least two bands; ${n === 1 ? 'only one band has' : 'no band has'} a constrained τ (fix α with --alpha 4.4 to get τ_ref)`,
    );
  }
  let fit;
  try {
    fit = weightedLine(x, y, s, n);
  } catch (e) {
    if (e instanceof SingularDesignError) {
      throw new RangeError('α needs τ at two or more different frequencies', { cause: e });
    }
    throw e;
  }
  const red = fit.dof > 0 ? fit.chi2 / fit.dof : null;
  const scale = red !== null && red > 1 ? Math.sqrt(red) : 1;
  const tauRef = Math.exp(fit.params[0]);
  return {
    ref_freq_mhz: refFreqMhz,
    tau_ref_us: tauRef,
    tau_ref_err_us: tauRef * Math.sqrt(fit.cov[0]) * scale,
    alpha: -fit.params[1],
    alpha_err: Math.sqrt(fit.cov[3]) * scale,
    alpha_fixed: false,
    n_bands: n,
    chi2: fit.chi2,
    dof: fit.dof,
    reduced_chi2: red,
  };
}
