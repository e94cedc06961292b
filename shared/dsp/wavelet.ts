/**
 * Wavelet denoising of periodic signals (pulse profiles wrap around the turn): the Daubechies
 * four-tap orthonormal wavelet (Daubechies 1988, Commun. Pure Appl. Math. 41, 909) on a
 * periodic grid, soft thresholding of the detail coefficients at the universal threshold
 * σ·√(2 ln n) (Donoho & Johnstone 1994, Biometrika 81, 425), averaged over circular shifts of
 * the input ("cycle spinning", Coifman & Donoho 1995) so the result does not depend on where
 * the pulse sits relative to the dyadic grid.
 */
const S3 = Math.sqrt(3);
const NORM = 4 * Math.SQRT2;
/** scaling (low-pass) filter */
const H = [(1 + S3) / NORM, (3 + S3) / NORM, (3 - S3) / NORM, (1 - S3) / NORM];
/** wavelet (high-pass) filter g_k = (−1)^k h_(3−k) */
const G = [H[3], -H[2], H[1], -H[0]];

/** How many levels a length-n periodic transform can take (each halves an even length ≥ 8). */
export function waveletLevels(n: number): number {
  let levels = 0;
  let m = n;
  while (m % 2 === 0 && m >= 8) {
    levels++;
    m /= 2;
  }
  return levels;
}

/** In-place forward transform: after it, x = [a_L, d_L, …, d_1] (coarsest first). */
export function dwt(x: Float64Array, levels: number): void {
  const tmp = new Float64Array(x.length);
  let m = x.length;
  for (let l = 0; l < levels; l++) {
    const half = m / 2;
    for (let i = 0; i < half; i++) {
      let a = 0;
      let d = 0;
      for (let k = 0; k < 4; k++) {
        const v = x[(2 * i + k) % m];
        a += H[k] * v;
        d += G[k] * v;
      }
      tmp[i] = a;
      tmp[half + i] = d;
    }
    x.set(tmp.subarray(0, m));
    m = half;
  }
}

/** Inverse of dwt (the transform is orthonormal: the adjoint). */
export function idwt(x: Float64Array, levels: number): void {
  const tmp = new Float64Array(x.length);
  let m = x.length >> levels;
  for (let l = 0; l < levels; l++) {
    const full = 2 * m;
    tmp.fill(0, 0, full);
    for (let i = 0; i < m; i++) {
      const a = x[i];
      const d = x[m + i];
      for (let k = 0; k < 4; k++) tmp[(2 * i + k) % full] += H[k] * a + G[k] * d;
    }
    x.set(tmp.subarray(0, full));
    m = full;
  }
}

/**
 * Denoise a periodic signal with known per-sample noise σ: soft-threshold every detail
 * coefficient at σ·√(2 ln n), averaged over `shifts` circular shifts. Needs n divisible by 2
 * at least once with n ≥ 8 (see waveletLevels).
 */
export function waveletDenoise(x: ArrayLike<number>, sigma: number, shifts = 16): Float64Array {
  const n = x.length;
  const levels = waveletLevels(n);
  if (levels === 0) throw new RangeError(`wavelet denoising needs an even length ≥ 8, got ${n}`);
  const lambda = sigma * Math.sqrt(2 * Math.log(n));
  const approx = n >> levels;
  const out = new Float64Array(n);
  const w = new Float64Array(n);
  const spins = Math.max(1, Math.min(shifts, n));
  for (let s = 0; s < spins; s++) {
    for (let i = 0; i < n; i++) w[i] = x[(i + s) % n];
    dwt(w, levels);
    for (let i = approx; i < n; i++) {
      const v = w[i];
      w[i] = Math.sign(v) * Math.max(Math.abs(v) - lambda, 0);
    }
    idwt(w, levels);
    for (let i = 0; i < n; i++) out[(i + s) % n] += w[i] / spins;
  }
  return out;
}
