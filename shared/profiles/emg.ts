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

/**
 * The periodic EMG Σ_k f(u + kP) and its derivatives with respect to u, σ and τ, written into
 * `out` (no allocation). Derivatives (from the closed form above):
 *   ∂f/∂u = (φ − f)/τ,  ∂f/∂σ = (σ/τ²)(f − φ) − φ·u/(στ),  ∂f/∂τ = f·(u/τ² − 1/τ − σ²/τ³) + σ²φ/τ³
 * with φ the unit-area Gaussian.
 */
export function periodicEmg(
  u0: number,
  sigma: number,
  tau: number,
  period: number,
  out: EmgTerms,
): EmgTerms {
  // relative time reduced to one period, then images from the Gaussian's left reach onwards
  let u = u0 - period * Math.floor(u0 / period + 0.5);
  const left = -GAUSS_REACH * sigma;
  while (u - period >= left) u -= period;
  while (u < left) u += period;
  // where the tail becomes purely exponential; beyond the Gaussian's right reach (τ ≪ σ) the
  // remaining terms are below 1e-300 and are dropped
  const pureFrom = (sigma * sigma) / tau + Z_PURE * SQRT2 * sigma;
  const right = GAUSS_REACH * sigma;
  let f = 0;
  let du = 0;
  let ds = 0;
  let dt = 0;
  const s2 = sigma * sigma;
  const t2 = tau * tau;
  const t3 = t2 * tau;
  const small = tau < SMALL_TAU * sigma;
  for (; u < pureFrom && u <= right; u += period) {
    const v = emg(u, sigma, tau);
    const x = u / sigma;
    const phi =
      x < -GAUSS_REACH || x > GAUSS_REACH ? 0 : (Math.exp(-0.5 * x * x) * INV_SQRT_2PI) / sigma;
    f += v;
    du += (phi - v) / tau;
    if (small) {
      const d = smallTauDerivatives(x, sigma, tau, phi);
      ds += d.dfds;
      dt += d.dfdt;
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
      const q = Math.exp(-period / tau);
      const sum = g / (1 - q);
      const sumU = g * (u / (1 - q) + (period * q) / ((1 - q) * (1 - q)));
      f += sum;
      du -= sum / tau;
      ds += (sigma / t2) * sum;
      dt += sumU / t2 - sum / tau - (s2 / t3) * sum;
    }
  }
  out.f = f;
  out.dfdu = du;
  out.dfds = ds;
  out.dfdt = dt;
  return out;
}
