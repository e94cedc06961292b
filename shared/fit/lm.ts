import { levenbergMarquardt } from 'ml-levenberg-marquardt';
import { inverse, Matrix } from 'ml-matrix';

/**
 * Non-linear weighted least squares with ml-levenberg-marquardt and an analytic Jacobian.
 * The data are whitened first (y/σ against model/σ, unit weights), so the library's χ² and its
 * Gauss–Newton steps use the same weights. The library stops only after a fixed number of
 * iterations, so it runs in short rounds until χ² stops improving. Uncertainties come from
 * (JᵀWJ)⁻¹ at the solution, scaled by the reduced χ² (as scipy's curve_fit does by default).
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
  /** 1σ errors, scaled by √χ²_red */
  errors: number[];
  /** covariance, scaled by χ²_red, row-major p × p */
  cov: number[];
  chi2: number;
  dof: number;
  iterations: number;
  /** true where a parameter ended on (or within 1e-9 of) a bound */
  atBound: boolean[];
  singular: boolean;
}

export function lmFit(
  problem: LmProblem,
  { rounds = 15, perRound = 8, tolerance = 1e-9 } = {},
): LmResult {
  const { n, p, y, sigma } = problem;
  const x = Array.from({ length: n }, (_, i) => i);
  const yw = Float64Array.from({ length: n }, (_, i) => y[i] / sigma[i]);
  const model = new Float64Array(n);
  const jac = new Float64Array(n * p);
  const rows = Array.from({ length: n }, () => new Array<number>(p).fill(0));
  let cachedFor: number[] | undefined;
  // The library asks for the model and the Jacobian at the same parameters in turn; computing
  // both together (the Jacobian costs little more than the model) halves the evaluations.
  const ensure = (params: number[], _withJac: boolean) => {
    const same =
      cachedFor && cachedFor.length === params.length && cachedFor.every((v, i) => v === params[i]);
    if (same) return;
    problem.evaluate(params, model, jac);
    cachedFor = params.slice();
    for (let i = 0; i < n; i++) for (let j = 0; j < p; j++) rows[i][j] = jac[i * p + j] / sigma[i];
  };
  const chi2Of = (params: number[]) => {
    ensure(params, false);
    let c = 0;
    for (let i = 0; i < n; i++) {
      const r = yw[i] - model[i] / sigma[i];
      c += r * r;
    }
    return c;
  };
  let params = problem.start.slice();
  let chi2 = chi2Of(params);
  let iterations = 0;
  for (let round = 0; round < rounds; round++) {
    const r = levenbergMarquardt(
      { x, y: yw },
      (ps: number[]) => {
        ensure(ps, false);
        return (i: number) => model[i] / sigma[i];
      },
      {
        initialValues: params,
        minValues: problem.min,
        maxValues: problem.max,
        maxIterations: perRound,
        damping: 1e-3,
        errorTolerance: 0,
        jacobianFunction: (ps: number[]) => {
          ensure(ps, true);
          return (i: number) => rows[i];
        },
      },
    );
    iterations += r.iterations;
    const next = r.parameterValues;
    const c = chi2Of(next);
    const improved = c < chi2;
    if (improved) params = next;
    const gain = chi2 - c;
    if (improved) chi2 = c;
    if (!improved || gain <= tolerance * Math.max(1, chi2)) break;
  }
  // covariance at the solution from the analytic Jacobian
  ensure(params, true);
  const jtj = new Matrix(p, p);
  for (let a = 0; a < p; a++) {
    for (let b = a; b < p; b++) {
      let s = 0;
      for (let i = 0; i < n; i++) s += rows[i][a] * rows[i][b];
      jtj.set(a, b, s);
      jtj.set(b, a, s);
    }
  }
  const dof = n - p;
  const scale = dof > 0 ? chi2 / dof : 1;
  let cov: number[];
  try {
    const inv = inverse(jtj);
    cov = Array.from({ length: p * p }, (_, k) => inv.get(Math.floor(k / p), k % p) * scale);
  } catch {
    cov = new Array<number>(p * p).fill(NaN);
  }
  const singular = cov.some((v, k) => k % (p + 1) === 0 && !(v >= 0));
  const errors = Array.from({ length: p }, (_, j) => Math.sqrt(cov[j * p + j]));
  const atBound = params.map(
    (v, j) =>
      Math.abs(v - problem.min[j]) <= 1e-9 * Math.max(1, Math.abs(v)) ||
      Math.abs(v - problem.max[j]) <= 1e-9 * Math.max(1, Math.abs(v)),
  );
  return { params, errors, cov, chi2, dof, iterations, atBound, singular };
}
