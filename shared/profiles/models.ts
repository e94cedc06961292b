import FFT from 'fft.js';
import { periodicEmgRun } from './emg.js';

/**
 * Scattered pulse-profile models over one rotation of `nbin` bins (time unit: bins).
 * Each writes the model into `out` and, when asked, the Jacobian (row-major nbin × nParams)
 * into `jac`, without allocating.
 */
export interface ProfileModel {
  readonly kind: 'gauss' | 'template';
  readonly nbin: number;
  readonly names: string[];
  /** index of τ (bins) in the parameter vector */
  readonly tauIndex: number;
  evaluate(params: ArrayLike<number>, out: Float64Array, jac?: Float64Array): void;
}

/**
 * Baseline plus 1–3 Gaussian components of areas F_j, centres μ_j and widths σ_j, all scattered
 * by one thin screen with timescale τ (periodic EMG, see emg.ts).
 * Parameters: [b, τ, F₁, μ₁, σ₁, F₂, μ₂, σ₂, …].
 */
export function gaussModel(components: number, nbin: number): ProfileModel {
  const names = ['baseline', 'tau'];
  for (let c = 1; c <= components; c++) names.push(`area_${c}`, `center_${c}`, `width_${c}`);
  const p = names.length;
  // one component's periodic EMG and its derivatives over all bins (periodicEmgRun)
  const f = new Float64Array(nbin);
  const dfdu = new Float64Array(nbin);
  const dfds = new Float64Array(nbin);
  const dfdt = new Float64Array(nbin);
  return {
    kind: 'gauss',
    nbin,
    names,
    tauIndex: 1,
    evaluate(params, out, jac) {
      const b = params[0];
      const tau = params[1];
      for (let i = 0; i < nbin; i++) {
        out[i] = b;
        if (jac) {
          const row = i * p;
          jac[row] = 1;
          jac[row + 1] = 0;
        }
      }
      // components in order, so each bin sums b + F₁f₁ + F₂f₂ + … as before
      for (let c = 0; c < components; c++) {
        const area = params[2 + 3 * c];
        const mu = params[3 + 3 * c];
        const sigma = params[4 + 3 * c];
        // relative times i − μ for i = 0 … nbin − 1
        periodicEmgRun(-mu, nbin, sigma, tau, nbin, f, dfdu, dfds, dfdt);
        for (let i = 0; i < nbin; i++) {
          out[i] += area * f[i];
          if (jac) {
            const row = i * p;
            jac[row + 1] += area * dfdt[i];
            jac[row + 2 + 3 * c] = f[i];
            jac[row + 3 + 3 * c] = -area * dfdu[i];
            jac[row + 4 + 3 * c] = area * dfds[i];
          }
        }
      }
    },
  };
}

/** Discrete Fourier transform of a real array, by FFT for powers of two, else directly. */
export class Spectrum {
  readonly n: number;
  private readonly fft: FFT | undefined;
  private readonly work: number[];
  private readonly spec: number[];
  private readonly cos: Float64Array | undefined;
  private readonly sin: Float64Array | undefined;

  constructor(n: number) {
    this.n = n;
    const pow2 = n >= 2 && (n & (n - 1)) === 0;
    this.fft = pow2 ? new FFT(n) : undefined;
    this.work = new Array(2 * n).fill(0);
    this.spec = new Array(2 * n).fill(0);
    if (!pow2) {
      this.cos = new Float64Array(n);
      this.sin = new Float64Array(n);
      for (let k = 0; k < n; k++) {
        this.cos[k] = Math.cos((2 * Math.PI * k) / n);
        this.sin[k] = Math.sin((2 * Math.PI * k) / n);
      }
    }
  }

  /** Forward transform: X_k = Σ x_j e^(−2πijk/n), written interleaved (re, im) into `out`. */
  forward(x: ArrayLike<number>, out: Float64Array): void {
    const n = this.n;
    if (this.fft) {
      for (let j = 0; j < n; j++) {
        this.work[2 * j] = x[j];
        this.work[2 * j + 1] = 0;
      }
      this.fft.transform(this.spec, this.work);
      for (let j = 0; j < 2 * n; j++) out[j] = this.spec[j];
      return;
    }
    for (let k = 0; k < n; k++) {
      let re = 0;
      let im = 0;
      for (let j = 0; j < n; j++) {
        const m = (j * k) % n;
        re += x[j] * this.cos![m];
        im -= x[j] * this.sin![m];
      }
      out[2 * k] = re;
      out[2 * k + 1] = im;
    }
  }

  /** Inverse transform of an interleaved spectrum; writes the real part (1/n included). */
  inverseReal(spec: Float64Array, out: Float64Array): void {
    const n = this.n;
    if (this.fft) {
      for (let j = 0; j < 2 * n; j++) this.spec[j] = spec[j];
      this.fft.inverseTransform(this.work, this.spec);
      for (let j = 0; j < n; j++) out[j] = this.work[2 * j];
      return;
    }
    for (let j = 0; j < n; j++) {
      let re = 0;
      for (let k = 0; k < n; k++) {
        const m = (j * k) % n;
        re += spec[2 * k] * this.cos![m] - spec[2 * k + 1] * this.sin![m];
      }
      out[j] = re / n;
    }
  }
}

/**
 * A template (e.g. the least-scattered band) scaled by A, shifted by φ bins and convolved with
 * the periodic exponential of timescale τ, plus a baseline, computed in the Fourier domain:
 * M_k = A·T_k·e^(−2πikφ/n)/(1 + 2πi k̃ τ/n), k̃ the signed harmonic (the Fourier series of the
 * periodic one-sided exponential of unit area). Parameters: [b, τ, A, φ].
 */
export function templateModel(template: ArrayLike<number>): ProfileModel {
  const n = template.length;
  const dft = new Spectrum(n);
  const tk = new Float64Array(2 * n);
  // the template's own mean goes to the baseline term
  let mean = 0;
  for (let i = 0; i < n; i++) mean += template[i] / n;
  dft.forward(
    Array.from(template, (v) => v - mean),
    tk,
  );
  const m0 = new Float64Array(2 * n);
  const mPhi = new Float64Array(2 * n);
  const mTau = new Float64Array(2 * n);
  const r0 = new Float64Array(n);
  const rPhi = new Float64Array(n);
  const rTau = new Float64Array(n);
  const names = ['baseline', 'tau', 'scale', 'shift'];
  return {
    kind: 'template',
    nbin: n,
    names,
    tauIndex: 1,
    evaluate(params, out, jac) {
      const [b, tau, scale, shift] = [params[0], params[1], params[2], params[3]];
      for (let k = 0; k < n; k++) {
        const ks = k <= n / 2 ? k : k - n; // signed harmonic
        const w = (2 * Math.PI * ks) / n;
        // shift: e^(−iwφ); scattering: 1/(1 + iwτ)
        const cr = Math.cos(w * shift);
        const ci = -Math.sin(w * shift);
        const d = 1 + w * w * tau * tau;
        const hr = 1 / d;
        const hi = (-w * tau) / d;
        // T·e^(−iwφ)
        const ar = tk[2 * k] * cr - tk[2 * k + 1] * ci;
        const ai = tk[2 * k] * ci + tk[2 * k + 1] * cr;
        // × H
        const br = ar * hr - ai * hi;
        const bi = ar * hi + ai * hr;
        m0[2 * k] = br;
        m0[2 * k + 1] = bi;
        if (jac) {
          // ∂/∂φ: × (−iw);  ∂/∂τ: × (−iw)·H, since dH/dτ = −iw/(1 + iwτ)²
          mPhi[2 * k] = w * bi;
          mPhi[2 * k + 1] = -w * br;
          const qr = w * hi; // (−iw)(hr + i·hi) = w·hi − i·w·hr
          const qi = -w * hr;
          mTau[2 * k] = br * qr - bi * qi;
          mTau[2 * k + 1] = br * qi + bi * qr;
        }
      }
      // (the inverse keeps the real part, so the Nyquist harmonic needs no special care)
      dft.inverseReal(m0, r0);
      for (let i = 0; i < n; i++) out[i] = b + scale * r0[i];
      if (jac) {
        dft.inverseReal(mPhi, rPhi);
        dft.inverseReal(mTau, rTau);
        for (let i = 0; i < n; i++) {
          const row = i * 4;
          jac[row] = 1;
          jac[row + 1] = scale * rTau[i];
          jac[row + 2] = r0[i];
          jac[row + 3] = scale * rPhi[i];
        }
      }
    },
  };
}
