import { RealFft } from '../dsp/fft.js';
import { wrapPhase } from './cube.js';

/**
 * Fourier-domain template matching (Taylor 1992, Phil. Trans. R. Soc. A 341, 117, from memory).
 *
 * A profile's harmonics P_k are modelled as b·T_k·e^(−2πikφ) (template T scaled by b and
 * delayed by φ turns), k = 1 … H, the baseline (k = 0) left out. With s² the noise variance of
 * the real and of the imaginary part of each P_k (s² = nbin·σ²/2 for white noise of per-bin σ),
 *
 *   χ²(b, φ) = Σ_k |P_k − b T_k e^(−2πikφ)|² / s²
 *            = (Σ|P_k|² − 2b·C(φ) + b²·Σ|T_k|²) / s²,   C(φ) = Σ_k Re(P_k T̄_k e^(2πikφ)),
 *
 * so b = C(φ)/Σ|T_k|² and the best φ maximises the cross-correlation C. The uncertainties come
 * from the curvature of χ² at the minimum, σ_φ² = s² / (−b·C''(φ)) and σ_b² = s²/Σ|T_k|²;
 * the matched-filter S/N is b/σ_b = C/(s·√Σ|T_k|²).
 */

/** C(φ), C'(φ), C''(φ) of a cross-spectrum Z_k = P_k T̄_k (k = 1 … h at z[off + k − 1]). */
export function crossAt(
  zre: Float64Array,
  zim: Float64Array,
  off: number,
  h: number,
  phi: number,
  out: Float64Array,
): void {
  const w = 2 * Math.PI * phi;
  const cr = Math.cos(w);
  const ci = Math.sin(w);
  let er = cr;
  let ei = ci;
  let c0 = 0;
  let c1 = 0;
  let c2 = 0;
  for (let k = 1; k <= h; k++) {
    if ((k & 63) === 0) {
      // restart the rotation now and then so rounding cannot accumulate
      er = Math.cos(w * k);
      ei = Math.sin(w * k);
    }
    const a = zre[off + k - 1];
    const b = zim[off + k - 1];
    const re = a * er - b * ei; // Re(Z e^(iθ))
    const imv = a * ei + b * er; // Im(Z e^(iθ))
    const tk = 2 * Math.PI * k;
    c0 += re;
    c1 -= tk * imv;
    c2 -= tk * tk * re;
    const nr = er * cr - ei * ci;
    ei = er * ci + ei * cr;
    er = nr;
  }
  out[0] = c0;
  out[1] = c1;
  out[2] = c2;
}

export interface Peak {
  /** phase of the maximum of C, turns, in [−0.5, 0.5) */
  phase: number;
  /** C at the maximum */
  c: number;
  /** C'' at the maximum (negative at a proper maximum) */
  c2: number;
}

/**
 * Finds the global maximum of C(φ) over the whole turn: C on the bin grid by one inverse FFT,
 * then a safeguarded Newton search on C'(φ) = 0 between the neighbouring bins of the best one.
 */
export class PeakFinder {
  private readonly fft: RealFft;
  private readonly sre: Float64Array;
  private readonly sim: Float64Array;
  private readonly grid: Float64Array;
  private readonly tmp = new Float64Array(3);

  constructor(
    readonly nbin: number,
    readonly h: number,
  ) {
    this.fft = new RealFft(nbin);
    this.sre = new Float64Array(this.fft.size);
    this.sim = new Float64Array(this.fft.size);
    this.grid = new Float64Array(nbin);
  }

  find(zre: Float64Array, zim: Float64Array, off = 0): Peak {
    const { nbin, h, sre, sim, grid, tmp } = this;
    sre.fill(0);
    sim.fill(0);
    for (let k = 1; k <= h; k++) {
      sre[k] = zre[off + k - 1];
      sim[k] = zim[off + k - 1];
    }
    // inverse FFT: x_j = (2/n) Σ_k Re(Z_k e^(2πijk/n)), so C(j/n) = x_j·n/2
    this.fft.inverse(sre, sim, grid);
    let best = 0;
    for (let j = 1; j < nbin; j++) if (grid[j] > grid[best]) best = j;
    const step = 1 / nbin;
    let lo = (best - 1) * step;
    let hi = (best + 1) * step;
    // the maximum lies where C' changes sign from + to −; widen if the grid misled us
    crossAt(zre, zim, off, h, lo, tmp);
    let dlo = tmp[1];
    crossAt(zre, zim, off, h, hi, tmp);
    let dhi = tmp[1];
    for (let i = 0; i < 4 && !(dlo >= 0 && dhi <= 0); i++) {
      if (dlo < 0) {
        lo -= step;
        crossAt(zre, zim, off, h, lo, tmp);
        dlo = tmp[1];
      }
      if (dhi > 0) {
        hi += step;
        crossAt(zre, zim, off, h, hi, tmp);
        dhi = tmp[1];
      }
    }
    let x = best * step;
    if (dlo >= 0 && dhi <= 0) {
      // rtsafe: Newton steps kept inside the bracket, bisection otherwise
      for (let it = 0; it < 60; it++) {
        crossAt(zre, zim, off, h, x, tmp);
        const d = tmp[1];
        if (d > 0) lo = x;
        else hi = x;
        let next = tmp[2] < 0 ? x - d / tmp[2] : NaN;
        if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
        const moved = Math.abs(next - x);
        x = next;
        if (moved < 1e-13 || hi - lo < 1e-13) break;
      }
    }
    crossAt(zre, zim, off, h, x, tmp);
    return { phase: wrapPhase(x), c: tmp[0], c2: tmp[2] };
  }
}

export interface ChannelMatch {
  /** delay of the profile relative to the template, turns, in [−0.5, 0.5) */
  phase: number;
  phaseErr: number;
  /** template scale b and its error */
  amp: number;
  ampErr: number;
  snr: number;
  /** noise variance s² of each real and imaginary harmonic part (given, or from residuals) */
  s2: number;
  chi2: number;
  dof: number;
  /** false when the match has no usable maximum (b ≤ 0 or a flat curvature) */
  ok: boolean;
}

/**
 * Match one profile (harmonics pre/pim at offset poff) to a template (tre/tim at toff), both
 * with h harmonics; `tpower` = Σ|T_k|², `ppower` = Σ|P_k|². `s2Given` (from a known per-bin
 * σ) fixes the noise; otherwise it is estimated from the residual χ² with 2h − 2 degrees of
 * freedom, so the reduced χ² is 1 by construction.
 */
export function matchProfile(
  pre: Float64Array,
  pim: Float64Array,
  poff: number,
  ppower: number,
  tre: Float64Array,
  tim: Float64Array,
  toff: number,
  tpower: number,
  finder: PeakFinder,
  zre: Float64Array,
  zim: Float64Array,
  s2Given?: number,
): ChannelMatch {
  const h = finder.h;
  for (let k = 0; k < h; k++) {
    const a = pre[poff + k];
    const b = pim[poff + k];
    const c = tre[toff + k];
    const d = tim[toff + k];
    // P · conj(T)
    zre[k] = a * c + b * d;
    zim[k] = b * c - a * d;
  }
  const peak = finder.find(zre, zim, 0);
  const dof = 2 * h - 2;
  const amp = peak.c / tpower;
  const resid = Math.max(ppower - (peak.c * peak.c) / tpower, 0);
  const s2 = s2Given ?? resid / dof;
  const chi2 = resid / s2;
  const curv = -amp * peak.c2;
  const ok = amp > 0 && curv > 0 && s2 > 0 && Number.isFinite(s2);
  return {
    phase: peak.phase,
    phaseErr: ok ? Math.sqrt(s2 / curv) : NaN,
    amp,
    ampErr: Math.sqrt(s2 / tpower),
    snr: s2 > 0 ? peak.c / Math.sqrt(s2 * tpower) : 0,
    s2,
    chi2,
    dof,
    ok,
  };
}
