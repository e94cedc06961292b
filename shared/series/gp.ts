import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { nelderMead } from '../fit/nelder-mead.js';

/**
 * Gaussian-process regression of a DM series (Rasmussen & Williams 2006, Gaussian Processes
 * for Machine Learning, Algorithm 2.1 and eq. 5.8): squared-exponential kernel
 * k(t, t') = A² exp(−(t − t')² / 2ℓ²) plus white noise σ_i² + w², constant mean fitted by
 * generalised least squares; A, ℓ, w maximise the log marginal likelihood.
 */
export interface GpHyper {
  amplitude: number;
  lengthDays: number;
  white: number;
}

export interface GpModel extends GpHyper {
  mean: number;
  logLikelihood: number;
  /** the simplex met its tolerance */
  converged: boolean;
  /** the length scale ended at the edge of the allowed range (half the closest spacing to 5 spans) */
  lengthAtBound: boolean;
  predict(t: number[]): { mean: number[]; sd: number[] };
}

interface Factored {
  chol: CholeskyDecomposition;
  alpha: Matrix; // K⁻¹ (y − m)
  kinvOne: Matrix; // K⁻¹ 1
  oneKinvOne: number;
  mean: number;
  logLikelihood: number;
}

function factor(t: number[], y: number[], err: number[], h: GpHyper): Factored | undefined {
  const n = t.length;
  const k = new Matrix(n, n);
  const a2 = h.amplitude * h.amplitude;
  const inv2l2 = 1 / (2 * h.lengthDays * h.lengthDays);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      const d = t[i] - t[j];
      const v = a2 * Math.exp(-d * d * inv2l2);
      k.set(i, j, v);
      k.set(j, i, v);
    }
    k.set(i, i, a2 + err[i] * err[i] + h.white * h.white);
  }
  const chol = new CholeskyDecomposition(k);
  if (!chol.isPositiveDefinite()) return undefined;
  const ones = Matrix.ones(n, 1);
  const kinvOne = chol.solve(ones);
  const kinvY = chol.solve(Matrix.columnVector(y));
  const oneKinvOne = kinvOne.sum();
  const mean = kinvY.sum() / oneKinvOne;
  const resid = Matrix.columnVector(y.map((v) => v - mean));
  const alpha = chol.solve(resid);
  const l = chol.lowerTriangularMatrix;
  let logDet = 0;
  for (let i = 0; i < n; i++) logDet += 2 * Math.log(l.get(i, i));
  let quad = 0;
  for (let i = 0; i < n; i++) quad += resid.get(i, 0) * alpha.get(i, 0);
  const logLikelihood = -0.5 * quad - 0.5 * logDet - 0.5 * n * Math.log(2 * Math.PI);
  return { chol, alpha, kinvOne, oneKinvOne, mean, logLikelihood };
}

/** Fit hyperparameters by maximising the marginal likelihood, from a few starting lengths. */
export function fitGp(t: number[], y: number[], err: number[]): GpModel {
  const n = t.length;
  if (n < 3) throw new RangeError('a Gaussian-process fit needs at least three points');
  const sorted = [...t].sort((a, b) => a - b);
  const span = sorted[n - 1] - sorted[0]; // no spread of t: it may hold a million points
  let minStep = Infinity;
  for (let i = 1; i < n; i++)
    if (sorted[i] > sorted[i - 1]) minStep = Math.min(minStep, sorted[i] - sorted[i - 1]);
  if (!Number.isFinite(minStep)) minStep = 1;
  const mean = y.reduce((s, v) => s + v, 0) / n;
  const sd =
    Math.sqrt(y.reduce((s, v) => s + (v - mean) ** 2, 0) / n) ||
    err.reduce((a, b) => Math.max(a, b), 0);
  const medErr = [...err].sort((a, b) => a - b)[Math.floor(n / 2)];
  const lMin = Math.max(minStep / 2, 1e-3);
  const lMax = Math.max(span * 5, lMin * 10);
  // parameters in logs; lengths kept inside [lMin, lMax] by a penalty
  const decode = (x: number[]): GpHyper => ({
    amplitude: Math.exp(x[0]),
    lengthDays: Math.exp(x[1]),
    white: Math.exp(x[2]),
  });
  const objective = (x: number[]) => {
    const h = decode(x);
    if (h.lengthDays < lMin || h.lengthDays > lMax) return Infinity;
    if (h.amplitude > 1e3 * sd + 1e3 * medErr || h.white > 1e3 * sd + 1e3 * medErr) return Infinity;
    const f = factor(t, y, err, h);
    return f ? -f.logLikelihood : Infinity;
  };
  let best: { x: number[]; value: number; converged: boolean } | undefined;
  for (const l0 of [span / 20, span / 5, span]) {
    const start = [
      Math.log(sd || 1e-6),
      Math.log(Math.min(lMax, Math.max(lMin, l0 || 1))),
      Math.log(medErr * 0.1 || 1e-9),
    ];
    const r = nelderMead(objective, start, [1, 1, 1], { maxIterations: 600, tolerance: 1e-10 });
    if (!best || r.value < best.value) best = r;
  }
  const h = decode(best!.x);
  const f = factor(t, y, err, h)!;
  return {
    ...h,
    mean: f.mean,
    logLikelihood: f.logLikelihood,
    converged: best!.converged,
    lengthAtBound: h.lengthDays < lMin * 1.001 || h.lengthDays > lMax / 1.001,
    predict(ts: number[]) {
      const a2 = h.amplitude * h.amplitude;
      const inv2l2 = 1 / (2 * h.lengthDays * h.lengthDays);
      const outMean: number[] = [];
      const outSd: number[] = [];
      for (const s of ts) {
        const ks = Matrix.columnVector(t.map((ti) => a2 * Math.exp(-((s - ti) ** 2) * inv2l2)));
        let mu = f.mean;
        for (let i = 0; i < n; i++) mu += ks.get(i, 0) * f.alpha.get(i, 0);
        const v = f.chol.solve(ks);
        let kvk = 0;
        let oneV = 0;
        for (let i = 0; i < n; i++) {
          kvk += ks.get(i, 0) * v.get(i, 0);
          oneV += v.get(i, 0);
        }
        // latent variance plus the uncertainty of the GLS mean (R&W eq. 2.42)
        const r = 1 - oneV;
        const variance = Math.max(0, a2 - kvk) + (r * r) / f.oneKinvOne;
        outMean.push(mu);
        outSd.push(Math.sqrt(variance));
      }
      return { mean: outMean, sd: outSd };
    },
  };
}
