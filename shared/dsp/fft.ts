import FFT from 'fft.js';

/**
 * Discrete Fourier transforms of real arrays of any length, X_k = Σ_j x_j e^(−2πijk/n) (the
 * sign and scaling of numpy.fft.fft), through `fft.js`: directly for powers of two, and by
 * Bluestein's chirp-z algorithm (Bluestein 1970, IEEE Trans. Audio Electroacoust. 18, 451) on a
 * power-of-two FFT for every other length, so every length costs O(n log n).
 *
 * Only the harmonics k = 0 … ⌊n/2⌋ are returned: a real signal's other half is their complex
 * conjugate. Spectra are kept as separate real and imaginary arrays of length ⌊n/2⌋ + 1.
 */
export class RealFft {
  readonly n: number;
  /** number of harmonics returned, ⌊n/2⌋ + 1 (k = 0 … ⌊n/2⌋) */
  readonly size: number;
  private readonly pow2: FFT | undefined;
  private readonly bluestein: Bluestein | undefined;
  private readonly inBuf: Float64Array;
  private readonly outBuf: Float64Array;

  constructor(n: number) {
    if (!Number.isInteger(n) || n < 2) throw new RangeError(`FFT length must be ≥ 2, got ${n}`);
    this.n = n;
    this.size = (n >> 1) + 1;
    if ((n & (n - 1)) === 0) this.pow2 = new FFT(n);
    else this.bluestein = new Bluestein(n);
    this.inBuf = new Float64Array(2 * n);
    this.outBuf = new Float64Array(2 * n);
  }

  /** Harmonics 0 … ⌊n/2⌋ of the real array x (length n), into re and im. */
  forward(x: ArrayLike<number>, re: Float64Array, im: Float64Array): void {
    const n = this.n;
    const out = this.outBuf;
    if (this.pow2) {
      // realTransform reads a real array and fills the first half of the interleaved output
      const data = this.inBuf.subarray(0, n);
      for (let j = 0; j < n; j++) data[j] = x[j];
      this.pow2.realTransform(out, data);
    } else {
      const data = this.inBuf;
      for (let j = 0; j < n; j++) {
        data[2 * j] = x[j];
        data[2 * j + 1] = 0;
      }
      this.bluestein!.transform(data, out, -1);
    }
    for (let k = 0; k < this.size; k++) {
      re[k] = out[2 * k];
      im[k] = out[2 * k + 1];
    }
    // harmonic 0 (and n/2 for even n) of a real signal is real
    im[0] = 0;
    if (n % 2 === 0) im[n >> 1] = 0;
  }

  /**
   * The real array whose harmonics 0 … ⌊n/2⌋ are (re, im): x_j = (1/n) Σ_k X_k e^(2πijk/n)
   * over the full Hermitian spectrum (numpy.fft.irfft with n given). Written into `out`.
   */
  inverse(re: ArrayLike<number>, im: ArrayLike<number>, out: Float64Array): void {
    const n = this.n;
    const spec = this.inBuf;
    const half = this.size;
    for (let k = 0; k < half; k++) {
      spec[2 * k] = re[k];
      spec[2 * k + 1] = im[k];
    }
    spec[1] = 0;
    if (n % 2 === 0) spec[2 * (n >> 1) + 1] = 0;
    for (let k = half; k < n; k++) {
      spec[2 * k] = re[n - k];
      spec[2 * k + 1] = -im[n - k];
    }
    const res = this.outBuf;
    if (this.pow2) {
      this.pow2.inverseTransform(res, spec);
      for (let j = 0; j < n; j++) out[j] = res[2 * j];
    } else {
      this.bluestein!.transform(spec, res, 1);
      for (let j = 0; j < n; j++) out[j] = res[2 * j] / n;
    }
  }
}

/**
 * Complex DFT of any length n by Bluestein's identity jk = (j² + k² − (k − j)²)/2:
 * X_k = w̄_k Σ_j (x_j w̄_j) w_(k−j) with w_m = e^(iπm²/n) (forward sign), a circular convolution
 * done with power-of-two FFTs of length M ≥ 2n − 1. The chirp is computed from m² mod 2n so its
 * phase stays exact for long arrays.
 */
class Bluestein {
  private readonly n: number;
  private readonly m: number;
  private readonly fft: FFT;
  /** chirp e^(−iπm²/n), interleaved */
  private readonly chirp: Float64Array;
  /** FFT of the conjugate chirp wrapped onto length M, for each sign */
  private readonly kernelForward: Float64Array;
  private readonly kernelInverse: Float64Array;
  private readonly a: Float64Array;
  private readonly b: Float64Array;

  constructor(n: number) {
    this.n = n;
    let m = 1;
    while (m < 2 * n - 1) m <<= 1;
    this.m = m;
    this.fft = new FFT(m);
    this.chirp = new Float64Array(2 * n);
    for (let j = 0; j < n; j++) {
      const q = (j * j) % (2 * n); // exact in doubles for n < 2^26
      const angle = (Math.PI * q) / n;
      this.chirp[2 * j] = Math.cos(angle);
      this.chirp[2 * j + 1] = -Math.sin(angle);
    }
    this.a = new Float64Array(2 * m);
    this.b = new Float64Array(2 * m);
    this.kernelForward = this.kernel(-1);
    this.kernelInverse = this.kernel(1);
  }

  /**
   * FFT of the convolution kernel placed circularly on M: conj(chirp) = e^(iπm²/n) for the
   * forward sign, the chirp itself for the inverse.
   */
  private kernel(sign: -1 | 1): Float64Array {
    const { n, m } = this;
    const k = new Float64Array(2 * m);
    for (let j = 0; j < n; j++) {
      const re = this.chirp[2 * j];
      const im = sign === -1 ? -this.chirp[2 * j + 1] : this.chirp[2 * j + 1];
      k[2 * j] = re;
      k[2 * j + 1] = im;
      if (j > 0) {
        k[2 * (m - j)] = re;
        k[2 * (m - j) + 1] = im;
      }
    }
    const out = new Float64Array(2 * m);
    this.fft.transform(out, k);
    return out;
  }

  /** sign −1: X_k = Σ x_j e^(−2πijk/n); sign +1: the same with e^(+2πijk/n), unscaled. */
  transform(x: Float64Array, out: Float64Array, sign: -1 | 1): void {
    const { n, m, a, b, chirp } = this;
    a.fill(0);
    for (let j = 0; j < n; j++) {
      // x_j · c_j with c = chirp (forward) or its conjugate (inverse)
      const cr = chirp[2 * j];
      const ci = sign === -1 ? chirp[2 * j + 1] : -chirp[2 * j + 1];
      const xr = x[2 * j];
      const xi = x[2 * j + 1];
      a[2 * j] = xr * cr - xi * ci;
      a[2 * j + 1] = xr * ci + xi * cr;
    }
    this.fft.transform(b, a);
    const kern = sign === -1 ? this.kernelForward : this.kernelInverse;
    for (let k = 0; k < m; k++) {
      const br = b[2 * k];
      const bi = b[2 * k + 1];
      const kr = kern[2 * k];
      const ki = kern[2 * k + 1];
      b[2 * k] = br * kr - bi * ki;
      b[2 * k + 1] = br * ki + bi * kr;
    }
    this.fft.inverseTransform(a, b);
    for (let k = 0; k < n; k++) {
      const cr = chirp[2 * k];
      const ci = sign === -1 ? chirp[2 * k + 1] : -chirp[2 * k + 1];
      const yr = a[2 * k];
      const yi = a[2 * k + 1];
      out[2 * k] = yr * cr - yi * ci;
      out[2 * k + 1] = yr * ci + yi * cr;
    }
  }
}
