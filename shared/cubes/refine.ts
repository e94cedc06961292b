import type { DispersionConstant } from '../physics/constants.js';
import { RealFft } from '../dsp/fft.js';
import { crossSpectra, type CubeContext } from './context.js';

/**
 * DM refinement by S/N over trial DMs. Each channel's harmonics are shifted by the dispersion
 * phase of a trial ΔDM (relative to the DM the cube was dedispersed with),
 * e^(+2πik·d_c·ΔDM) with d_c = K·(ν_c⁻² − ν_ref⁻²)/P turns per pc cm⁻³ — a Fourier shift, exact
 * for fractional bins — and summed over channels with matched-filter weights w_c = b_c/s_c²
 * (b_c the channel's template amplitude, s_c² its harmonic noise). The summed profile's S/N is
 * the matched filter against the template, maximised over phase:
 *
 *   S/N(ΔDM) = max_φ Σ_k Re(e^(2πikφ) Σ_c w_c P_ck T̄_ck e^(2πik d_c ΔDM)) / √V,
 *   V = Σ_c w_c² s_c² Σ_k |T_ck|²  (the variance of the numerator under noise).
 *
 * With these weights −S/N² is, up to a constant, the χ² of all channels against the template
 * with a common amplitude scale and phase, so the 1σ interval of ΔDM is where S/N² drops by 1:
 * near the peak S/N² ≈ S/N²_max − a(ΔDM − ΔDM*)², σ = 1/√a (parabolic refinement).
 */
export class DmShifter {
  readonly h: number;
  /** weighted cross-spectra w_c·P_ck·T̄_ck of the used channels, row by row */
  private readonly zre: Float64Array;
  private readonly zim: Float64Array;
  /** turns of shift per pc cm⁻³ of each used channel */
  readonly d: Float64Array;
  readonly used: Int32Array;
  /** √V: the noise of the summed cross-correlation */
  readonly norm: number;
  private readonly sre: Float64Array;
  private readonly sim: Float64Array;

  constructor(
    readonly ctx: CubeContext,
    weights: Float64Array,
    d: Float64Array,
  ) {
    const { x, template } = ctx;
    const h = x.h;
    this.h = h;
    const used: number[] = [];
    for (let c = 0; c < weights.length; c++) if (weights[c] > 0) used.push(c);
    this.used = Int32Array.from(used);
    this.d = Float64Array.from(used, (c) => d[c]);
    const z = crossSpectra(ctx, this.used, weights);
    this.zre = z.re;
    this.zim = z.im;
    let v = 0;
    for (const c of used) v += weights[c] ** 2 * ctx.s2[c] * template.harm.power[template.rowOf[c]];
    this.norm = Math.sqrt(v);
    this.sre = new Float64Array(h);
    this.sim = new Float64Array(h);
  }

  /** S_k(ΔDM) = Σ_c Z_ck e^(2πik d_c ΔDM), k = 1 … h, into the internal buffers. */
  private sum(delta: number): void {
    const { h, zre, zim, d, sre, sim } = this;
    sre.fill(0);
    sim.fill(0);
    for (let u = 0; u < d.length; u++) {
      const w = 2 * Math.PI * d[u] * delta;
      const cr = Math.cos(w);
      const ci = Math.sin(w);
      let er = cr;
      let ei = ci;
      const base = u * h;
      for (let k = 0; k < h; k++) {
        if ((k & 255) === 255) {
          // restart the rotation from the exact angle now and then
          er = Math.cos(w * (k + 1));
          ei = Math.sin(w * (k + 1));
        }
        const a = zre[base + k];
        const b = zim[base + k];
        sre[k] += a * er - b * ei;
        sim[k] += a * ei + b * er;
        const nr = er * cr - ei * ci;
        ei = er * ci + ei * cr;
        er = nr;
      }
    }
  }

  /** Matched-filter S/N of the channels summed at ΔDM, and the phase of its maximum. */
  snrAt(delta: number): { snr: number; phase: number } {
    this.sum(delta);
    const peak = this.ctx.finder.find(this.sre, this.sim, 0);
    return { snr: peak.c / this.norm, phase: peak.phase };
  }
}

/** Turns of dispersive shift per pc cm⁻³ for each channel, relative to refMhz (null: ∞). */
export function shiftPerDm(
  freqs: Float64Array,
  periodS: number,
  refMhz: number | null,
  k: DispersionConstant,
): Float64Array {
  const ref = refMhz === null ? 0 : 1 / (refMhz * refMhz);
  return Float64Array.from(freqs, (f) => (k.value * (1 / (f * f) - ref)) / periodS);
}

/** Matched-filter weights b_c/s_c² (0 for flagged channels and non-positive amplitudes). */
export function matchedWeights(ctx: CubeContext): Float64Array {
  return Float64Array.from(ctx.matches, (m, c) =>
    m && m.amp > 0 && ctx.s2[c] > 0 ? m.amp / ctx.s2[c] : 0,
  );
}

/** The channels' weighted mean frequency, (Σ w ν⁻² / Σ w)^(−1/2) with w = S/N²: where the
 * phase of a summed profile is least tied to the DM. */
export function weightedCentreMhz(ctx: CubeContext): number {
  let sw = 0;
  let s = 0;
  ctx.matches.forEach((m, c) => {
    if (!m || !(m.amp > 0)) return;
    const w = m.snr * m.snr;
    sw += w;
    s += w / (ctx.cube.freqs[c] * ctx.cube.freqs[c]);
  });
  if (!(sw > 0)) {
    // no usable channel: the plain mean of ν⁻² over unflagged channels
    ctx.cube.freqs.forEach((f, c) => {
      if (ctx.cube.flagged[c]) return;
      sw += 1;
      s += 1 / (f * f);
    });
  }
  return 1 / Math.sqrt(s / sw);
}

export interface DmRange {
  lo: number;
  hi: number;
  step: number;
}

/** The most trial DMs one grid may hold. */
export const MAX_TRIALS = 1_000_000;

/** Trial DMs lo, lo + step, … ≤ hi (with a little slack for decimal steps). */
export function trialDms(r: DmRange): Float64Array {
  const n = Math.floor((r.hi - r.lo) / r.step + 1e-9) + 1;
  if (!(n >= 1) || n > MAX_TRIALS) throw new RangeError(`the range gives ${n} trial DMs`);
  // 15 significant digits: the decimal trial values, without binary noise from j·step
  return Float64Array.from({ length: n }, (_, j) => Number((r.lo + j * r.step).toPrecision(15)));
}

export interface RefineOutcome {
  /** DM the channels were shifted relative to (the cube's own) */
  dmApplied: number;
  curve: Array<{ dm: number; snr: number }>;
  best: { dm: number; dm_err: number | null; snr: number };
  /** the peak lies on the first or last trial: the true maximum may be outside the range */
  atEdge: boolean;
  warnings: string[];
}

/** Golden-section maximisation of f on [a, b]. */
function maximise(f: (x: number) => number, a: number, b: number, tol: number): number {
  const g = (Math.sqrt(5) - 1) / 2;
  let x1 = b - g * (b - a);
  let x2 = a + g * (b - a);
  let f1 = f(x1);
  let f2 = f(x2);
  for (let i = 0; i < 200 && b - a > tol; i++) {
    if (f1 < f2) {
      a = x1;
      x1 = x2;
      f1 = f2;
      x2 = a + g * (b - a);
      f2 = f(x2);
    } else {
      b = x2;
      x2 = x1;
      f2 = f1;
      x1 = b - g * (b - a);
      f1 = f(x1);
    }
  }
  return f1 > f2 ? x1 : x2;
}

/**
 * S/N over the trial grid, then the maximum refined between the neighbours of the best trial
 * and its error from the curvature of S/N² (see DmShifter). `progress` is called per trial.
 */
export function refineDm(
  shifter: DmShifter,
  dmApplied: number,
  range: DmRange,
  progress?: (done: number, total: number) => void,
): RefineOutcome {
  const trials = trialDms(range);
  const curve: Array<{ dm: number; snr: number }> = [];
  let best = 0;
  for (let j = 0; j < trials.length; j++) {
    const { snr } = shifter.snrAt(trials[j] - dmApplied);
    curve.push({ dm: trials[j], snr });
    if (snr > curve[best].snr) best = j;
    if (progress && (j & 15) === 15) progress(j + 1, trials.length);
  }
  const warnings: string[] = [];
  const atEdge = trials.length > 1 && (best === 0 || best === trials.length - 1);
  if (atEdge) {
    warnings.push(
      `the S/N peaks at the ${best === 0 ? 'lowest' : 'highest'} trial DM (${trials[best]}): the maximum may lie outside --range; widen it`,
    );
  }
  const f = (dm: number) => shifter.snrAt(dm - dmApplied).snr ** 2;
  const lo = trials[Math.max(0, best - 1)];
  const hi = trials[Math.min(trials.length - 1, best + 1)];
  const dmBest = hi > lo ? maximise(f, lo, hi, range.step * 1e-7) : trials[best];
  const fBest = f(dmBest);
  // curvature of S/N² at the peak, with the step settling on the 1σ half-width itself
  let h = range.step / 2;
  let a = NaN;
  for (let i = 0; i < 6; i++) {
    const next = (2 * fBest - f(dmBest + h) - f(dmBest - h)) / (2 * h * h);
    if (!(next > 0)) break;
    a = next;
    const sigma = 1 / Math.sqrt(a);
    if (Math.abs(sigma - h) < 0.01 * sigma) break;
    h = Math.min(Math.max(sigma, range.step * 1e-6), range.step * 8);
  }
  const dmErr = a > 0 ? 1 / Math.sqrt(a) : null;
  if (dmErr === null)
    warnings.push('the S/N curve is flat at its peak: no DM uncertainty could be derived');
  else if (dmErr > range.step * 4)
    warnings.push(
      `the DM uncertainty (${dmErr.toExponential(2)}) exceeds several trial steps: the data barely constrain the DM`,
    );
  return {
    dmApplied,
    curve,
    best: { dm: dmBest, dm_err: dmErr, snr: Math.sqrt(fBest) },
    atEdge,
    warnings,
  };
}

/**
 * The channels shifted by ΔDM and averaged with weights w_c/Σw: the dedispersed band-averaged
 * profile (harmonic 0 kept, the Nyquist harmonic dropped), and its per-bin noise.
 */
export function dedispersedProfile(
  ctx: CubeContext,
  weights: Float64Array,
  d: Float64Array,
  delta: number,
): { bins: Float64Array; noise: number } {
  const { cube } = ctx;
  const n = cube.nbin;
  const fft = new RealFft(n);
  const re = new Float64Array(fft.size);
  const im = new Float64Array(fft.size);
  const sre = new Float64Array(fft.size);
  const sim = new Float64Array(fft.size);
  let sw = 0;
  let var_ = 0;
  for (let c = 0; c < cube.nchan; c++) if (weights[c] > 0) sw += weights[c];
  for (let c = 0; c < cube.nchan; c++) {
    const w = weights[c] / sw;
    if (!(w > 0)) continue;
    fft.forward(cube.data.subarray(c * n, (c + 1) * n), re, im);
    sre[0] += w * re[0];
    for (let k = 1; k <= ctx.x.h; k++) {
      const ang = 2 * Math.PI * k * d[c] * delta;
      const cr = Math.cos(ang);
      const ci = Math.sin(ang);
      sre[k] += w * (re[k] * cr - im[k] * ci);
      sim[k] += w * (re[k] * ci + im[k] * cr);
    }
    var_ += w * w * ctx.sigma[c] * ctx.sigma[c];
  }
  const bins = new Float64Array(n);
  fft.inverse(sre, sim, bins);
  return { bins, noise: Math.sqrt(var_) };
}
