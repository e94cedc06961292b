/* eslint-disable no-loss-of-precision -- Lanczos coefficients as published (more digits than a double keeps) */
/**
 * Regularised incomplete gamma functions and the χ² distribution, by the series and continued
 * fraction of Press et al. 2007, Numerical Recipes 3rd ed., §6.2 (eqs. 6.2.5 and 6.2.7), with
 * ln Γ from the Lanczos approximation (§6.1).
 */
const LANCZOS = [
  57.1562356658629235, -59.5979603554754912, 14.1360979747417471, -0.491913816097620199,
  0.339946499848118887e-4, 0.465236289270485756e-4, -0.983744753048795646e-4,
  0.158088703224912494e-3, -0.210264441724104883e-3, 0.217439618115212643e-3,
  -0.16431810653676389e-3, 0.844182239838527433e-4, -0.261908384015814087e-4,
  0.368991826595316234e-5,
];

export function lnGamma(x: number): number {
  if (!(x > 0)) throw new RangeError('lnGamma needs x > 0');
  let y = x;
  const tmp = x + 5.2421875;
  const t = (x + 0.5) * Math.log(tmp) - tmp;
  let ser = 0.999999999999997092;
  for (const c of LANCZOS) ser += c / ++y;
  return t + Math.log((2.5066282746310005 * ser) / x);
}

function seriesP(a: number, x: number): number {
  let ap = a;
  let sum = 1 / a;
  let del = sum;
  for (let n = 0; n < 10000; n++) {
    ap += 1;
    del *= x / ap;
    sum += del;
    if (Math.abs(del) < Math.abs(sum) * 1e-16) break;
  }
  return sum * Math.exp(-x + a * Math.log(x) - lnGamma(a));
}

function continuedFractionQ(a: number, x: number): number {
  const tiny = 1e-300;
  let b = x + 1 - a;
  let c = 1 / tiny;
  let d = 1 / b;
  let h = d;
  for (let i = 1; i < 10000; i++) {
    const an = -i * (i - a);
    b += 2;
    d = an * d + b;
    if (Math.abs(d) < tiny) d = tiny;
    c = b + an / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < 1e-16) break;
  }
  return Math.exp(-x + a * Math.log(x) - lnGamma(a)) * h;
}

/** Regularised lower incomplete gamma P(a, x). */
export function gammaP(a: number, x: number): number {
  if (x <= 0) return 0;
  return x < a + 1 ? seriesP(a, x) : 1 - continuedFractionQ(a, x);
}

/** Regularised upper incomplete gamma Q(a, x) = 1 − P(a, x), accurate in the far tail. */
export function gammaQ(a: number, x: number): number {
  if (x <= 0) return 1;
  return x < a + 1 ? 1 - seriesP(a, x) : continuedFractionQ(a, x);
}

/** P(χ² ≤ x) for k degrees of freedom. */
export function chi2Cdf(x: number, k: number): number {
  return gammaP(k / 2, x / 2);
}

/** P(χ² > x) for k degrees of freedom (survival function). */
export function chi2Sf(x: number, k: number): number {
  return gammaQ(k / 2, x / 2);
}
