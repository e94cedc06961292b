import { levenbergMarquardt } from 'ml-levenberg-marquardt';
import { inverse, Matrix } from 'ml-matrix';

/**
 * Non-linear weighted least squares with ml-levenberg-marquardt and an analytic Jacobian.
 *
 * - The data are whitened (y/σ against model/σ, unit weights), so the library's χ² and its
 *   Gauss–Newton steps use the same weights.
 * - Parameters held fixed (min = max) are taken out of the problem, so the steps of the others
 *   do not assume they move.
 * - The free parameters are scaled so that JᵀWJ has a unit diagonal at the start (Marquardt's
 *   scaling; the library damps with λ·I, which only suits parameters of comparable size).
 * - Classic LM control around the library's single damped step: a step that lowers χ² is kept
 *   and the damping relaxed; one that does not is refused and the damping raised.
 *
 * Uncertainties come from (JᵀWJ)⁻¹ at the solution, scaled by the reduced χ² (as scipy's
 * curve_fit does by default).
 */
export interface LmProblem {
  n: number;
  p: number;
  y: ArrayLike<number>;
  sigma: ArrayLike<number>;
  /** model into `out` (length n) and, if given, the Jacobian into `jac` (row-major n × p) */
  evaluate(params: ArrayLike<number>, out: Float64Array, jac?: Float64Array): void;
  start: number[];
  min: number[];
  max: number[];
}

export interface LmResult {
  params: number[];
  /** 1σ errors scaled by √χ²_red (0 for fixed parameters) */
  errors: number[];
  /** covariance scaled by χ²_red, row-major p × p */
  cov: number[];
  /** formal covariance (JᵀWJ)⁻¹, not scaled by χ²_red (still defined when χ² is 0) */
  formalCov: number[];
  chi2: number;
  dof: number;
  iterations: number;
  /** true where a free parameter ended on (or within 1e-9 of) a bound */
  atBound: boolean[];
  singular: boolean;
  /** χ² stopped improving (or no step could lower it), rather than the step limit being hit */
  converged: boolean;
}

export function lmFit(problem: LmProblem, { maxSteps = 200, tolerance = 1e-10 } = {}): LmResult {
  const { n, p, y, sigma } = problem;
  const full = problem.start.map((v, j) => Math.min(problem.max[j], Math.max(problem.min[j], v)));
  const free = full.map((_, j) => j).filter((j) => problem.min[j] < problem.max[j]);
  const m = free.length;
  const x = Array.from({ length: n }, (_, i) => i);
  const yw = Float64Array.from({ length: n }, (_, i) => y[i] / sigma[i]);
  const model = new Float64Array(n);
  const jac = new Float64Array(n * p);
  const rows = Array.from({ length: n }, () => new Array<number>(m).fill(0));
  const scale = new Array<number>(m).fill(1);
  /** full parameter vector from the library's scaled free parameters */
  const expand = (q: ArrayLike<number>) => {
    const v = full.slice();
    for (let k = 0; k < m; k++) v[free[k]] = q[k] * scale[k];
    return v;
  };
  let cachedFor: number[] | undefined;
  // model and Jacobian are computed together: the library asks for both at the same point
  const ensure = (q: number[]) => {
    if (cachedFor && cachedFor.every((v, k) => v === q[k])) return;
    problem.evaluate(expand(q), model, jac);
    cachedFor = q.slice();
    for (let i = 0; i < n; i++) {
      const w = 1 / sigma[i];
      for (let k = 0; k < m; k++) rows[i][k] = jac[i * p + free[k]] * scale[k] * w;
    }
  };
  const chi2Of = (q: number[]) => {
    ensure(q);
    let c = 0;
    for (let i = 0; i < n; i++) {
      const r = yw[i] - model[i] / sigma[i];
      c += r * r;
    }
    return c;
  };
  let q = free.map((j) => full[j]);
  ensure(q);
  for (let k = 0; k < m; k++) {
    let d = 0;
    for (let i = 0; i < n; i++) d += rows[i][k] * rows[i][k];
    scale[k] = d > 0 && Number.isFinite(d) ? 1 / Math.sqrt(d) : 1;
  }
  cachedFor = undefined;
  q = free.map((j, k) => full[j] / scale[k]);
  const qMin = free.map((j, k) => problem.min[j] / scale[k]);
  const qMax = free.map((j, k) => problem.max[j] / scale[k]);
  let chi2 = chi2Of(q);
  let damping = 1e-3;
  let iterations = 0;
  let quiet = 0;
  let converged = m === 0;
  for (let step = 0; m > 0 && step < maxSteps; step++) {
    if (damping >= 1e10) {
      converged = true; // no step lowers χ² any more: a minimum
      break;
    }
    const r = levenbergMarquardt(
      { x, y: yw },
      (qs: number[]) => {
        ensure(qs);
        return (i: number) => model[i] / sigma[i];
      },
      {
        initialValues: q,
        minValues: qMin,
        maxValues: qMax,
        maxIterations: 1,
        damping,
        errorTolerance: 0,
        jacobianFunction: (qs: number[]) => {
          ensure(qs);
          return (i: number) => rows[i];
        },
      },
    );
    iterations++;
    const next = r.parameterValues;
    const c = chi2Of(next);
    if (c < chi2) {
      const gain = chi2 - c;
      q = next;
      chi2 = c;
      damping = Math.max(damping / 9, 1e-12);
      quiet = gain <= tolerance * Math.max(1, chi2) ? quiet + 1 : 0;
      if (quiet >= 2) {
        converged = true;
        break;
      }
    } else {
      damping *= 11;
    }
  }
  // covariance at the solution, in the real (unscaled) free parameters
  const params = expand(q);
  problem.evaluate(params, model, jac);
  const jtj = new Matrix(m, m);
  for (let a = 0; a < m; a++) {
    for (let b = a; b < m; b++) {
      let s = 0;
      for (let i = 0; i < n; i++)
        s += (jac[i * p + free[a]] * jac[i * p + free[b]]) / (sigma[i] * sigma[i]);
      jtj.set(a, b, s);
      jtj.set(b, a, s);
    }
  }
  const dof = n - m;
  const chi2Scale = dof > 0 ? chi2 / dof : 1;
  const cov = new Array<number>(p * p).fill(0);
  const formalCov = new Array<number>(p * p).fill(0);
  let singular = false;
  try {
    const inv = m > 0 ? inverse(jtj) : new Matrix(0, 0);
    for (let a = 0; a < m; a++)
      for (let b = 0; b < m; b++) {
        formalCov[free[a] * p + free[b]] = inv.get(a, b);
        cov[free[a] * p + free[b]] = inv.get(a, b) * chi2Scale;
      }
  } catch {
    for (const j of free) cov[j * p + j] = formalCov[j * p + j] = NaN;
  }
  for (const j of free) if (!(cov[j * p + j] >= 0)) singular = true;
  const errors = Array.from({ length: p }, (_, j) => Math.sqrt(cov[j * p + j]));
  // relative to the parameter's own scale, so the test does not depend on the data's units
  const near = (a: number, b: number, j: number) =>
    Math.abs(a - b) <= 1e-9 * Math.max(Math.abs(a), Math.abs(full[j]), errors[j] || 0, 1e-300);
  const atBound = params.map(
    (v, j) => free.includes(j) && (near(v, problem.min[j], j) || near(v, problem.max[j], j)),
  );
  return { params, errors, cov, formalCov, chi2, dof, iterations, atBound, singular, converged };
}
