/**
 * Weighted linear least squares by Householder QR of the whitened design matrix
 * (Golub & Van Loan 2013, Matrix Computations, §5.3). Columns are scaled to unit norm first so
 * that terms of very different size (offsets in µs, ν⁻² in MHz⁻²) do not spoil the conditioning.
 */
export interface WlsFit {
  /** best-fit parameters */
  params: ArrayLike<number>;
  /** covariance (AᵀWA)⁻¹, row-major p × p */
  cov: ArrayLike<number>;
  /** model − data residuals are data − model: y − A·params */
  residuals: Float64Array;
  chi2: number;
  dof: number;
}

export class SingularDesignError extends Error {
  constructor(readonly column: number) {
    super(`design matrix is rank deficient at column ${column}`);
  }
}

/**
 * Solve min Σ ((y_i − Σ_j A_ij x_j) / σ_i)² for x.
 * design: n × p row-major; y, sigma: length n. Throws SingularDesignError when a column is
 * (numerically) a combination of the others.
 */
export function weightedLeastSquares(
  design: Float64Array,
  y: Float64Array,
  sigma: Float64Array,
  n: number,
  p: number,
): WlsFit {
  if (n < p) throw new SingularDesignError(n);
  // Whitened, column-scaled copy in column-major order (QR works down columns).
  const a = new Float64Array(n * p);
  const b = new Float64Array(n);
  const scale = new Float64Array(p);
  for (let i = 0; i < n; i++) {
    const w = 1 / sigma[i];
    b[i] = y[i] * w;
    for (let j = 0; j < p; j++) a[j * n + i] = design[i * p + j] * w;
  }
  for (let j = 0; j < p; j++) {
    let s = 0;
    for (let i = 0; i < n; i++) s += a[j * n + i] * a[j * n + i];
    s = Math.sqrt(s);
    if (!(s > 0)) throw new SingularDesignError(j);
    scale[j] = s;
    for (let i = 0; i < n; i++) a[j * n + i] /= s;
  }
  const rdiag = new Float64Array(p);
  for (let k = 0; k < p; k++) {
    let norm = 0;
    for (let i = k; i < n; i++) norm += a[k * n + i] * a[k * n + i];
    norm = Math.sqrt(norm);
    // Column k has (almost) nothing left once the earlier columns are projected out.
    if (!(norm > 1e-10)) throw new SingularDesignError(k);
    const alpha = a[k * n + k] > 0 ? -norm : norm;
    a[k * n + k] -= alpha; // v = x − α e₁, stored in place
    let vnorm2 = 0;
    for (let i = k; i < n; i++) vnorm2 += a[k * n + i] * a[k * n + i];
    rdiag[k] = alpha;
    if (vnorm2 > 0) {
      for (let j = k + 1; j < p; j++) {
        let dot = 0;
        for (let i = k; i < n; i++) dot += a[k * n + i] * a[j * n + i];
        const f = (2 * dot) / vnorm2;
        for (let i = k; i < n; i++) a[j * n + i] -= f * a[k * n + i];
      }
      let dot = 0;
      for (let i = k; i < n; i++) dot += a[k * n + i] * b[i];
      const f = (2 * dot) / vnorm2;
      for (let i = k; i < n; i++) b[i] -= f * a[k * n + i];
    }
  }
  // R: diagonal in rdiag, upper part in a[j*n+i] for i < j.
  const r = (i: number, j: number) => (i === j ? rdiag[i] : a[j * n + i]);
  // Back substitution R z = (Qᵀb)[0..p)
  const z = new Float64Array(p);
  for (let i = p - 1; i >= 0; i--) {
    let s = b[i];
    for (let j = i + 1; j < p; j++) s -= r(i, j) * z[j];
    z[i] = s / r(i, i);
  }
  // R⁻¹ (upper triangular), then cov_scaled = R⁻¹ R⁻ᵀ
  const rinv = new Float64Array(p * p);
  for (let j = 0; j < p; j++) {
    rinv[j * p + j] = 1 / r(j, j);
    for (let i = j - 1; i >= 0; i--) {
      let s = 0;
      for (let k = i + 1; k <= j; k++) s += r(i, k) * rinv[k * p + j];
      rinv[i * p + j] = -s / r(i, i);
    }
  }
  const params = new Float64Array(p);
  const cov = new Float64Array(p * p);
  for (let i = 0; i < p; i++) {
    params[i] = z[i] / scale[i];
    for (let j = 0; j < p; j++) {
      let s = 0;
      for (let k = Math.max(i, j); k < p; k++) s += rinv[i * p + k] * rinv[j * p + k];
      cov[i * p + j] = s / (scale[i] * scale[j]);
    }
  }
  const residuals = new Float64Array(n);
  let chi2 = 0;
  for (let i = 0; i < n; i++) {
    let m = 0;
    for (let j = 0; j < p; j++) m += design[i * p + j] * params[j];
    residuals[i] = y[i] - m;
    const t = residuals[i] / sigma[i];
    chi2 += t * t;
  }
  return { params, cov, residuals, chi2, dof: n - p };
}

/**
 * The two-parameter case y = a + b·x in closed form with weighted centring (the same solution
 * and covariance as the QR path, without building a design matrix): b = Σw(x−x̄)(y−ȳ)/Σw(x−x̄)²,
 * var b = 1/Σw(x−x̄)², var a = 1/Σw + x̄² var b, cov(a,b) = −x̄ var b.
 */
export function weightedLine(
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  sigma: ArrayLike<number>,
  n: number,
  /** optional buffer (length ≥ n) to receive the residuals, to spare an allocation per call */
  residualsOut?: Float64Array,
): WlsFit {
  if (n < 2) throw new SingularDesignError(n);
  let sw = 0;
  let swx = 0;
  let swy = 0;
  for (let i = 0; i < n; i++) {
    const w = 1 / (sigma[i] * sigma[i]);
    sw += w;
    swx += w * x[i];
    swy += w * y[i];
  }
  const xm = swx / sw;
  const ym = swy / sw;
  let sxx = 0;
  let sxy = 0;
  let xscale = 0;
  for (let i = 0; i < n; i++) {
    const w = 1 / (sigma[i] * sigma[i]);
    const dx = x[i] - xm;
    sxx += w * dx * dx;
    sxy += w * dx * (y[i] - ym);
    xscale = Math.max(xscale, Math.abs(x[i]));
  }
  // x constant (to rounding): the slope is not determined
  if (!(sxx > 1e-20 * xscale * xscale * sw)) throw new SingularDesignError(1);
  const b = sxy / sxx;
  const a = ym - b * xm;
  const vb = 1 / sxx;
  const residuals = residualsOut ?? new Float64Array(n);
  let chi2 = 0;
  for (let i = 0; i < n; i++) {
    residuals[i] = y[i] - a - b * x[i];
    const t = residuals[i] / sigma[i];
    chi2 += t * t;
  }
  return {
    params: [a, b],
    cov: [1 / sw + xm * xm * vb, -xm * vb, -xm * vb, vb],
    residuals,
    chi2,
    dof: n - 2,
  };
}
