import erfcx from '@stdlib/math-base-special-erfcx';
import erfc from '@stdlib/math-base-special-erfc';

/**
 * A Gaussian pulse of unit area scattered by a thin screen: the Gaussian convolved with the
 * one-sided exponential h(t) = e^(−t/τ)/τ, t ≥ 0 (the exponentially modified Gaussian;
 * Grushka 1972, Anal. Chem. 44, 1733, eq. 2), made periodic over the pulse period P by summing
 * images u + kP. All times are in the same unit (bins in the fits).
 *
 *   f(u) = 1/(2τ) · exp(σ²/2τ² − u/τ) · erfc(z),  z = (σ/τ − u/σ)/√2,  u = t − μ
 *
 * evaluated stably as 1/(2τ) · exp(−u²/2σ²) · erfcx(z) while z ≥ 0 and through erfc(−z) after,
 * and summed in closed form (a geometric series) where the tail is purely exponential.
 */
const SQRT2 = Math.SQRT2;
const INV_SQRT_2PI = 1 / Math.sqrt(2 * Math.PI);
/** beyond this many σ a Gaussian factor is below 1e-300 */
const GAUSS_REACH = 37;
/** erfc(−z) < 2e-17 for z < −Z_PURE: the EMG is then a pure exponential to double precision */
const Z_PURE = 6;

/** Below τ/σ = SMALL_TAU the closed-form ∂/∂σ and ∂/∂τ cancel badly; a series takes over. */
const SMALL_TAU = 1e-2;

/**
 * ∂f/∂σ and ∂f/∂τ for τ ≪ σ from the expansion of the exponential's smoothing operator,
 * f = (1 + τ d/du)⁻¹ φ = φ − τφ′ + τ²φ″ − …, so ∂f/∂τ = −φ′ + 2τφ″ − 3τ²φ‴ and, with
 * ∂φ/∂σ = σφ″, ∂f/∂σ = σ(φ″ − τφ‴ + τ²φ⁗); the next terms are O((τ/σ)³) relative.
 * x = u/σ, phi = φ(u).
 */
export function smallTauDerivatives(
  x: number,
  sigma: number,
  tau: number,
  phi: number,
): { dfds: number; dfdt: number } {
  const x2 = x * x;
  const d1 = (-x / sigma) * phi;
  const d2 = ((x2 - 1) / (sigma * sigma)) * phi;
  const d3 = (-(x2 * x - 3 * x) / sigma ** 3) * phi;
  const d4 = ((x2 * x2 - 6 * x2 + 3) / sigma ** 4) * phi;
  return {
    dfds: sigma * (d2 - tau * d3 + tau * tau * d4),
    dfdt: -d1 + 2 * tau * d2 - 3 * tau * tau * d3,
  };
}

/** One unit-area EMG value at relative time u (no wrapping). */
export function emg(u: number, sigma: number, tau: number): number {
  const z = (sigma / tau - u / sigma) / SQRT2;
  if (z >= 0) {
    const x = u / sigma;
    if (x < -GAUSS_REACH) return 0;
    return (Math.exp(-0.5 * x * x) * erfcx(z)) / (2 * tau);
  }
  return (Math.exp((sigma * sigma) / (2 * tau * tau) - u / tau) * (2 - erfc(-z))) / (2 * tau);
}

/** Values and partial derivatives of one (wrapped) component at one time. */
export interface EmgTerms {
  f: number;
  dfdu: number;
  dfds: number;
  dfdt: number;
}

/** Scratch for periodicEmg's single point. */
const one = {
  f: new Float64Array(1),
  du: new Float64Array(1),
  ds: new Float64Array(1),
  dt: new Float64Array(1),
};

/**
 * The periodic EMG Σ_k f(u + kP) and its derivatives with respect to u, σ and τ, written into
 * `out` (no allocation). Derivatives (from the closed form above):
 *   ∂f/∂u = (φ − f)/τ,  ∂f/∂σ = (σ/τ²)(f − φ) − φ·u/(στ),  ∂f/∂τ = f·(u/τ² − 1/τ − σ²/τ³) + σ²φ/τ³
 * with φ the unit-area Gaussian. (periodicEmgRun with a run of one point.)
 */
export function periodicEmg(
  u0: number,
  sigma: number,
  tau: number,
  period: number,
  out: EmgTerms,
): EmgTerms {
  periodicEmgRun(u0, 1, sigma, tau, period, one.f, one.du, one.ds, one.dt);
  out.f = one.f[0];
  out.dfdu = one.du[0];
  out.dfds = one.ds[0];
  out.dfdt = one.dt[0];
  return out;
}

/**
 * periodicEmg at the `count` relative times u0 + i (i = 0 … count − 1): the values into f[i],
 * ∂/∂u, ∂/∂σ, ∂/∂τ into du[i], ds[i], dt[i]. One call per model evaluation, so the numbers stay
 * unboxed and σ³, σ⁴ and e^(−P/τ) are computed once. The image sum inlines emg() and
 * smallTauDerivatives() with the same operations in the same order (the Gaussian factor
 * e^(−x²/2) computed once for f and φ), so the values are those of those functions to the bit.
 */
export function periodicEmgRun(
  u0: number,
  count: number,
  sigma: number,
  tau: number,
  period: number,
  fOut: Float64Array,
  duOut: Float64Array,
  dsOut: Float64Array,
  dtOut: Float64Array,
): void {
  const left = -GAUSS_REACH * sigma;
  // where the tail becomes purely exponential; beyond the Gaussian's right reach (τ ≪ σ) the
  // remaining terms are below 1e-300 and are dropped
  const pureFrom = (sigma * sigma) / tau + Z_PURE * SQRT2 * sigma;
  const right = GAUSS_REACH * sigma;
  const s2 = sigma * sigma;
  const t2 = tau * tau;
  const t3 = t2 * tau;
  const small = tau < SMALL_TAU * sigma;
  const sigma3 = small ? sigma ** 3 : NaN;
  const sigma4 = small ? sigma ** 4 : NaN;
  let q = NaN; // e^(−P/τ), when first needed
  for (let i = 0; i < count; i++) {
    // relative time reduced to one period, then images from the Gaussian's left reach onwards
    const ui = u0 + i;
    let u = ui - period * Math.floor(ui / period + 0.5);
    while (u - period >= left) u -= period;
    while (u < left) u += period;
    let f = 0;
    let du = 0;
    let ds = 0;
    let dt = 0;
    for (; u < pureFrom && u <= right; u += period) {
      const x = u / sigma;
      // emg(u, σ, τ), and φ from the same Gaussian factor where both need it
      const z = (sigma / tau - u / sigma) / SQRT2;
      let v: number;
      let phi: number;
      if (z >= 0) {
        if (x < -GAUSS_REACH) {
          v = 0;
          phi = 0;
        } else {
          const gauss = Math.exp(-0.5 * x * x);
          v = (gauss * erfcx(z)) / (2 * tau);
          phi = x > GAUSS_REACH ? 0 : (gauss * INV_SQRT_2PI) / sigma;
        }
      } else {
        v = (Math.exp((sigma * sigma) / (2 * tau * tau) - u / tau) * (2 - erfc(-z))) / (2 * tau);
        phi =
          x < -GAUSS_REACH || x > GAUSS_REACH ? 0 : (Math.exp(-0.5 * x * x) * INV_SQRT_2PI) / sigma;
      }
      f += v;
      du += (phi - v) / tau;
      if (small) {
        // smallTauDerivatives(x, σ, τ, φ)
        const x2 = x * x;
        const d1 = (-x / sigma) * phi;
        const d2 = ((x2 - 1) / (sigma * sigma)) * phi;
        const d3 = (-(x2 * x - 3 * x) / sigma3) * phi;
        const d4 = ((x2 * x2 - 6 * x2 + 3) / sigma4) * phi;
        ds += sigma * (d2 - tau * d3 + tau * tau * d4);
        dt += -d1 + 2 * tau * d2 - 3 * tau * tau * d3;
      } else {
        ds += (sigma / t2) * (v - phi) - (phi * u) / (sigma * tau);
        dt += v * (u / t2 - 1 / tau - s2 / t3) + (s2 * phi) / t3;
      }
    }
    if (u >= pureFrom) {
      // Σ_{m≥0} g(u + mP) with g(u) = exp(σ²/2τ² − u/τ)/τ: g(u)/(1 − q), q = e^(−P/τ);
      // Σ (u + mP) g(u + mP) = g(u)·(u/(1 − q) + P q/(1 − q)²)
      const g = Math.exp(s2 / (2 * t2) - u / tau) / tau;
      if (g > 0) {
        if (Number.isNaN(q)) q = Math.exp(-period / tau);
        const sum = g / (1 - q);
        const sumU = g * (u / (1 - q) + (period * q) / ((1 - q) * (1 - q)));
        f += sum;
        du -= sum / tau;
        ds += (sigma / t2) * sum;
        dt += sumU / t2 - sum / tau - (s2 / t3) * sum;
      }
    }
    fOut[i] = f;
    duOut[i] = du;
    dsOut[i] = ds;
    dtOut[i] = dt;
  }
}
