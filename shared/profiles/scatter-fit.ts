import { gaussModel, templateModel, type ProfileModel } from './models.js';
import { noiseFromDifferences, pulseShape } from './estimate.js';
import { lmFit, type LmResult } from '../fit/lm.js';

export type ScatterModelName = 'gauss' | 'gauss2' | 'gauss3' | 'template';

export interface BandFitOptions {
  model: ScatterModelName;
  /** template bins (same number of bins), for model "template" */
  template?: ArrayLike<number>;
  /** per-bin noise σ; estimated from the profile when absent */
  noise?: number;
}

export interface BandFit {
  status: 'fitted' | 'upper_limit' | 'failed';
  names: string[];
  params: number[];
  errors: number[];
  tauBins: number;
  tauErrBins: number;
  chi2: number;
  dof: number;
  reducedChi2: number;
  noise: number;
  noiseEstimated: boolean;
  snr: number;
  iterations: number;
  warnings: string[];
  /** for upper limits: the τ (bins) where χ² has risen by 4 with the other parameters refitted */
  tauUpperBins?: number;
  /** the best-fit model, bins */
  model: Float64Array;
}

/** The narrowest intrinsic width among the components, bins (∞ for a template). */
function narrowestWidth(model: ProfileModel, params: number[]): number {
  if (model.kind !== 'gauss') return Infinity;
  let w = Infinity;
  for (let j = 4; j < params.length; j += 3) w = Math.min(w, params[j]);
  return w;
}

/**
 * A one-sided 2σ upper limit on τ from the profile likelihood: hold τ at increasing values,
 * refit everything else, and find where χ² has risen by 4 (scaled by χ²_red when above 1).
 * Near τ = 0 the curvature error is useless because τ and the pulse centre are degenerate.
 */
function profileUpperLimit(
  model: ProfileModel,
  y: ArrayLike<number>,
  sigma: Float64Array,
  best: LmResult,
  min: number[],
  max: number[],
): number {
  const ti = model.tauIndex;
  const red = best.dof > 0 ? Math.max(1, best.chi2 / best.dof) : 1;
  const target = best.chi2 + 4 * red;
  // χ² with τ held at `tau`, everything else refitted from the nearest point already found
  let params = best.params.slice();
  const chi2At = (tau: number) => {
    const lo = min.slice();
    const hi = max.slice();
    lo[ti] = tau;
    hi[ti] = tau;
    const start = params.slice();
    start[ti] = tau;
    const fit = fitWith(model, y, sigma, start, lo, hi, 1e-7);
    params = fit.params;
    return fit.chi2;
  };
  // bracket by doubling, then bisect in log τ: a handful of refits instead of a fine scan
  let lo = best.params[ti];
  let hi = Math.max(lo * 2, 0.05);
  let steps = 0;
  while (hi <= max[ti] && chi2At(hi) < target) {
    lo = hi;
    hi *= 2;
    if (++steps > 40) return max[ti];
  }
  if (hi > max[ti]) return max[ti];
  lo = Math.max(lo, hi / 2, TAU_MIN_BINS);
  for (let k = 0; k < 8; k++) {
    const mid = Math.sqrt(lo * hi);
    if (chi2At(mid) < target) lo = mid;
    else hi = mid;
  }
  return hi;
}

/** Δχ² over τ = 0 needed to call scattering detected (3σ for one extra parameter). */
export const DETECTION_DCHI2 = 9;

/** Smallest τ the fit may take, bins (a screen this weak is indistinguishable from none). */
export const TAU_MIN_BINS = 1e-3;

function fitWith(
  model: ProfileModel,
  y: ArrayLike<number>,
  sigma: Float64Array,
  start: number[],
  min: number[],
  max: number[],
  tolerance = 1e-10,
): LmResult {
  return lmFit(
    {
      n: model.nbin,
      p: start.length,
      y,
      sigma,
      evaluate: (ps, out, jac) => model.evaluate(ps, out, jac),
      start,
      min,
      max,
    },
    { tolerance },
  );
}

/**
 * Fit one band's profile with a scattered-pulse model by Levenberg–Marquardt, starting from
 * values read off the profile and trying short, medium and long scattering times. A τ not
 * distinguishable from zero (error larger than the value, or at the lower bound) is an upper
 * limit, never a measurement.
 */
export function fitProfileBand(bins: ArrayLike<number>, opts: BandFitOptions): BandFit {
  const n = bins.length;
  const noiseEstimated = opts.noise === undefined;
  const noise = opts.noise ?? noiseFromDifferences(bins);
  const sigma = new Float64Array(n).fill(noise > 0 ? noise : 1e-12);
  const shape = pulseShape(bins);
  const warnings: string[] = [];
  const tauMax = 50 * n;
  let best: { fit: LmResult; model: ProfileModel; min: number[]; max: number[] } | undefined;
  const consider = (model: ProfileModel, fit: LmResult, min: number[], max: number[]) => {
    if (Number.isFinite(fit.chi2) && (!best || fit.chi2 < best.fit.chi2))
      best = { fit, model, min, max };
  };
  // the estimate first; shorter and longer starting τ only when that fit is poor
  const tauStarts = [
    shape.tau,
    Math.max(TAU_MIN_BINS * 10, shape.tau / 10),
    Math.min(tauMax / 2, shape.tau * 5 + shape.sigma),
  ];
  const good = () =>
    best !== undefined &&
    best.fit.dof > 0 &&
    best.fit.chi2 / best.fit.dof < 1.5 &&
    !best.fit.atBound[1];

  if (opts.model === 'template') {
    if (!opts.template || opts.template.length !== n) {
      throw new RangeError(`the template has ${opts.template?.length ?? 0} bins, the profile ${n}`);
    }
    const model = templateModel(opts.template);
    const tShape = pulseShape(opts.template);
    const scale0 = shape.height / Math.max(tShape.height, 1e-12);
    const shift0 = shape.peakBin - tShape.peakBin;
    for (const tau of tauStarts) {
      if (good()) break;
      const min = [-Infinity, TAU_MIN_BINS, 0, shift0 - n / 2];
      const max = [Infinity, tauMax, Infinity, shift0 + n / 2];
      consider(
        model,
        fitWith(model, bins, sigma, [shape.baseline, tau, scale0, shift0], min, max),
        min,
        max,
      );
    }
  } else {
    const components = opts.model === 'gauss' ? 1 : opts.model === 'gauss2' ? 2 : 3;
    const bounds = (c: number) => ({
      min: [-Infinity, TAU_MIN_BINS, ...Array.from({ length: c }, () => [0, -n, 0.3]).flat()],
      max: [Infinity, tauMax, ...Array.from({ length: c }, () => [Infinity, 2 * n, n / 2]).flat()],
    });
    let start: number[] = [];
    for (const tau of tauStarts) {
      if (good()) break;
      const one = gaussModel(1, n);
      const s = [shape.baseline, tau, shape.area, shape.peakBin, shape.sigma];
      const b = bounds(1);
      const fit = fitWith(one, bins, sigma, s, b.min, b.max);
      if (!best || fit.chi2 < best.fit.chi2) {
        best = { fit, model: one, min: b.min, max: b.max };
        start = fit.params;
      }
    }
    // further components: start each at the largest remaining residual
    for (let c = 2; c <= components; c++) {
      const prev = best!.model;
      const resid = new Float64Array(n);
      prev.evaluate(best!.fit.params, resid);
      let at = 0;
      for (let i = 0; i < n; i++) {
        resid[i] = bins[i] - resid[i];
        if (resid[i] > resid[at]) at = i;
      }
      const model = gaussModel(c, n);
      const s = [...start, Math.max(resid[at], noise) * shape.sigma * 2.5066, at, shape.sigma];
      const b = bounds(c);
      const fit = fitWith(model, bins, sigma, s, b.min, b.max);
      best = { fit, model, min: b.min, max: b.max };
      start = fit.params;
    }
  }
  let { fit } = best!;
  const { model, min, max } = best!;
  // Is scattering detected at all? Near τ = 0 the pulse centre and width absorb τ, the χ²
  // surface is flat and may hold a second, spurious minimum, so the curvature error is no
  // guide. Refit with τ held at (almost) zero and compare: a likelihood-ratio test. The same
  // refit catches a τ ≈ 0 minimum the starts above missed.
  const ti = model.tauIndex;
  const red0 = fit.dof > 0 ? Math.max(1, fit.chi2 / fit.dof) : 1;
  let significance = Infinity;
  if (fit.params[ti] < 3 * narrowestWidth(model, fit.params) && !fit.singular) {
    const lo = min.slice();
    const hi = max.slice();
    lo[ti] = TAU_MIN_BINS;
    hi[ti] = TAU_MIN_BINS;
    const start = fit.params.slice();
    start[ti] = TAU_MIN_BINS;
    const none = fitWith(model, bins, sigma, start, lo, hi);
    if (none.chi2 < fit.chi2) {
      // the τ ≈ 0 solution is better: refit from it with τ free
      const again = fitWith(model, bins, sigma, none.params, min, max);
      if (again.chi2 < fit.chi2) fit = again;
    }
    significance = Math.max(0, none.chi2 - fit.chi2) / red0;
  }
  const out = new Float64Array(n);
  model.evaluate(fit.params, out);
  const tau = fit.params[ti];
  const tauErr = fit.errors[ti];
  const reducedChi2 = fit.dof > 0 ? fit.chi2 / fit.dof : NaN;
  let peak = -Infinity;
  for (let i = 0; i < n; i++) peak = Math.max(peak, out[i] - fit.params[0]);
  let status: BandFit['status'] = 'fitted';
  if (fit.singular || !Number.isFinite(tauErr)) {
    status = 'failed';
    warnings.push('the fit did not converge to a well-defined minimum (singular curvature)');
  } else if (fit.atBound[ti] || tauErr >= tau || significance < DETECTION_DCHI2) {
    status = 'upper_limit';
    warnings.push(
      `scattering is not detected (χ² improves by ${Number.isFinite(significance) ? significance.toFixed(1) : '—'} over no scattering, < ${DETECTION_DCHI2}): reported as a 2σ upper limit`,
    );
  }
  if (fit.atBound.some((b, j) => b && j !== model.tauIndex && Number.isFinite(fit.params[j]))) {
    warnings.push(
      `parameter(s) at a bound: ${model.names.filter((_, j) => fit.atBound[j] && j !== model.tauIndex).join(', ')}`,
    );
  }
  const tauUpperBins =
    status === 'upper_limit' ? profileUpperLimit(model, bins, sigma, fit, min, max) : undefined;
  return {
    status,
    tauUpperBins,
    names: model.names,
    params: fit.params,
    errors: fit.errors,
    tauBins: tau,
    tauErrBins: tauErr,
    chi2: fit.chi2,
    dof: fit.dof,
    reducedChi2,
    noise,
    noiseEstimated,
    snr: noise > 0 ? peak / noise : Infinity,
    iterations: fit.iterations,
    warnings,
    model: out,
  };
}
