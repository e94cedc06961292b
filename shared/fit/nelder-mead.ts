/**
 * Downhill simplex minimisation (Nelder & Mead 1965, Computer Journal 7, 308), with the
 * standard coefficients (reflection 1, expansion 2, contraction ½, shrink ½).
 */
export interface SimplexResult {
  x: number[];
  value: number;
  iterations: number;
  converged: boolean;
}

export function nelderMead(
  f: (x: number[]) => number,
  start: number[],
  step: number[],
  { maxIterations = 2000, tolerance = 1e-9 } = {},
): SimplexResult {
  const d = start.length;
  const evaluate = (x: number[]) => {
    const v = f(x);
    return Number.isFinite(v) ? v : Infinity;
  };
  let simplex = [start.slice()];
  for (let i = 0; i < d; i++) {
    const x = start.slice();
    x[i] += step[i];
    simplex.push(x);
  }
  let values = simplex.map(evaluate);
  let it = 0;
  for (; it < maxIterations; it++) {
    const order = values.map((v, i) => i).sort((a, b) => values[a] - values[b]);
    simplex = order.map((i) => simplex[i]);
    values = order.map((i) => values[i]);
    const spread = Math.abs(values[d] - values[0]);
    if (spread <= tolerance * (Math.abs(values[0]) + tolerance)) {
      return { x: simplex[0], value: values[0], iterations: it, converged: true };
    }
    const centroid = new Array(d).fill(0);
    for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) centroid[j] += simplex[i][j] / d;
    const along = (t: number) => centroid.map((c, j) => c + t * (simplex[d][j] - c));
    const xr = along(-1);
    const fr = evaluate(xr);
    if (fr < values[0]) {
      const xe = along(-2);
      const fe = evaluate(xe);
      [simplex[d], values[d]] = fe < fr ? [xe, fe] : [xr, fr];
    } else if (fr < values[d - 1]) {
      [simplex[d], values[d]] = [xr, fr];
    } else {
      const xc = fr < values[d] ? along(-0.5) : along(0.5);
      const fc = evaluate(xc);
      if (fc < Math.min(fr, values[d])) {
        [simplex[d], values[d]] = [xc, fc];
      } else {
        for (let i = 1; i <= d; i++) {
          simplex[i] = simplex[i].map((v, j) => simplex[0][j] + 0.5 * (v - simplex[0][j]));
          values[i] = evaluate(simplex[i]);
        }
      }
    }
  }
  const best = values.indexOf(Math.min(...values));
  return { x: simplex[best], value: values[best], iterations: it, converged: false };
}
