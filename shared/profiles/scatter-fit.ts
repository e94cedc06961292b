import { gaussModel, Spectrum, templateModel, type ProfileModel } from './models.js';
import { chi2Sf } from '../stats/gamma.js';
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

/** Spread of the quietest quarter of the profile (circular window with the lowest mean). */
function offPulseSpread(bins: ArrayLike<number>): number {
  const n = bins.length;
  const w = Math.max(4, Math.round(n / 4));
  let bestMean = Infinity;
  let bestStart = 0;
  for (let i = 0; i < n; i++) {
    let m = 0;
    for (let k = 0; k < w; k++) m += bins[(i + k) % n];
    if (m < bestMean) {
      bestMean = m;
      bestStart = i;
    }
  }
  const mean = bestMean / w;
  let v = 0;
  for (let k = 0; k < w; k++) v += (bins[(bestStart + k) % n] - mean) ** 2;
  return Math.sqrt(v / (w - 1));
}

/** Shift (bins) that best aligns the template with the data: the peak of their circular
 * cross-correlation, by DFT. */
function crossCorrelationShift(data: ArrayLike<number>, template: ArrayLike<number>): number {
  const n = data.length;
  const dft = new Spectrum(n);
  const d = new Float64Array(2 * n);
  const t = new Float64Array(2 * n);
  dft.forward(data, d);
  dft.forward(template, t);
  const c = new Float64Array(2 * n);
  for (let k = 0; k < n; k++) {
    // D·conj(T)
    c[2 * k] = d[2 * k] * t[2 * k] + d[2 * k + 1] * t[2 * k + 1];
    c[2 * k + 1] = d[2 * k + 1] * t[2 * k] - d[2 * k] * t[2 * k + 1];
  }
  c[0] = 0;
  c[1] = 0;
  const r = new Float64Array(n);
  dft.inverseReal(c, r);
  let at = 0;
  for (let i = 1; i < n; i++) if (r[i] > r[at]) at = i;
  return at > n / 2 ? at - n : at;
}

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
 * values read off the profile and trying short, medium and long scattering times. Scattering
 * counts as detected only if χ² improves by DETECTION_DCHI2 over τ held at zero; otherwise the
 * band is an upper limit from the profile likelihood, never a measurement.
 */
export function fitProfileBand(bins: ArrayLike<number>, opts: BandFitOptions): BandFit {
  const n = bins.length;
  const noiseEstimated = opts.noise === undefined;
  // bin-to-bin differences first; quantised (integer) data can make their MAD zero, then the
  // spread of the quietest quarter of the profile
  let noise = opts.noise ?? noiseFromDifferences(bins);
  if (!(noise > 0)) noise = offPulseSpread(bins);
  if (!(noise > 0)) {
    throw new RangeError(
      'the noise per bin cannot be estimated from this profile: give it (noise) in the input',
    );
  }
  const sigma = new Float64Array(n).fill(noise);
  const shape = pulseShape(bins);
  const warnings: string[] = [];
  const tauMax = 50 * n;
  let best:
    | { fit: LmResult; model: ProfileModel; min: number[]; max: number[]; initial: number[] }
    | undefined;
  const consider = (
    model: ProfileModel,
    fit: LmResult,
    min: number[],
    max: number[],
    initial: number[],
  ) => {
    if (Number.isFinite(fit.chi2) && (!best || fit.chi2 < best.fit.chi2))
      best = { fit, model, min, max, initial };
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
    const shift0 = crossCorrelationShift(bins, opts.template);
    for (const tau of [TAU_MIN_BINS * 10, ...tauStarts]) {
      if (good()) break;
      const min = [-Infinity, TAU_MIN_BINS, 0, shift0 - n / 2];
      const max = [Infinity, tauMax, Infinity, shift0 + n / 2];
      const start = [shape.baseline, tau, scale0, shift0];
      consider(model, fitWith(model, bins, sigma, start, min, max), min, max, start);
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
        best = { fit, model: one, min: b.min, max: b.max, initial: s };
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
      best = { fit, model, min: b.min, max: b.max, initial: s };
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
  const fixedLo = min.slice();
  const fixedHi = max.slice();
  fixedLo[ti] = TAU_MIN_BINS;
  fixedHi[ti] = TAU_MIN_BINS;
  // τ held at zero, from the τ-free solution and from the profile's own shape: the better
  let noScatter: LmResult | undefined;
  for (const from of [fit.params, best!.initial]) {
    const start = from.slice();
    start[ti] = TAU_MIN_BINS;
    const f = fitWith(model, bins, sigma, start, fixedLo, fixedHi);
    if (!noScatter || f.chi2 < noScatter.chi2) noScatter = f;
  }
  if (noScatter!.chi2 < fit.chi2) {
    // the τ ≈ 0 solution is better: refit from it with τ free
    const again = fitWith(model, bins, sigma, noScatter!.params, min, max);
    if (again.chi2 < fit.chi2) fit = again;
  }
  const significance = Math.max(0, noScatter!.chi2 - fit.chi2) / red0;
  const out = new Float64Array(n);
  model.evaluate(fit.params, out);
  const tau = fit.params[ti];
  const tauErr = fit.errors[ti];
  const reducedChi2 = fit.dof > 0 ? fit.chi2 / fit.dof : NaN;
  let peak = -Infinity;
  for (let i = 0; i < n; i++) peak = Math.max(peak, out[i] - fit.params[0]);
  // is there a pulse at all? its flux (first area, or the template's scale) against its error,
  // from the τ-free fit, or from the τ = 0 fit where τ and the pulse centre are degenerate
  const fluxIndex = 2;
  const fluxFrom = Number.isFinite(fit.errors[fluxIndex]) && !fit.singular ? fit : noScatter;
  const fluxSignificance = fluxFrom ? fluxFrom.params[fluxIndex] / fluxFrom.errors[fluxIndex] : NaN;
  const notDetected = fit.atBound[ti] || !(significance >= DETECTION_DCHI2);
  let status: BandFit['status'] = 'fitted';
  if (!(fluxSignificance >= 3)) {
    status = 'failed';
    warnings.push(
      `no pulse detected (flux at ${Number.isFinite(fluxSignificance) ? fluxSignificance.toFixed(1) : '—'}σ): τ cannot be measured`,
    );
  } else if (tau >= max[ti] * 0.999) {
    status = 'failed';
    warnings.push(
      `τ ran to the top of the fit range (${(max[ti] / n).toFixed(0)} periods): scattering far longer than the period cannot be measured from one profile`,
    );
  } else if (notDetected || !(tauErr < tau)) {
    // near τ = 0 the curvature is degenerate (τ trades with the pulse centre): the limit from
    // the profile likelihood is the statement
    status = 'upper_limit';
    warnings.push(
      `scattering is not detected (χ² improves by ${Number.isFinite(significance) ? significance.toFixed(1) : '—'} over no scattering, < ${DETECTION_DCHI2}): reported as a 2σ upper limit`,
    );
  } else if (fit.singular) {
    status = 'failed';
    warnings.push('the fit did not converge to a well-defined minimum (singular curvature)');
  }
  if (!fit.converged)
    warnings.push(`the fit stopped after ${fit.iterations} steps without converging`);
  if (Number.isFinite(reducedChi2) && fit.dof > 0 && chi2Sf(fit.chi2, fit.dof) < 1e-3) {
    warnings.push(
      `reduced χ² = ${reducedChi2.toFixed(2)} is improbably large: the pulse model may be too simple (try more components or a template)`,
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
