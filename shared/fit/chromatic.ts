import { weightedLeastSquares, SingularDesignError, type WlsFit } from './wls.js';
import { lmFit } from './lm.js';
import { KOLMOGOROV_ALPHA } from '../profiles/empirical.js';

/**
 * Chromatic fit of one visit: DM and a scattering delay fitted together to arrival times or
 * residuals, r_i = a_receiver + K·DM/ν² [+ evolution] + S·(ν/ν_ref)^−α, where S is the change
 * of scattering delay at ν_ref (τ_ref, µs). Three models are compared — DM only, α held fixed
 * (4.4 for Kolmogorov turbulence unless given), α free (Levenberg–Marquardt) — by χ², AIC =
 * χ² + 2p and BIC = χ² + p·ln n; the preferred model has the lowest BIC.
 */
export type ScatterMode = 'none' | 'fixed' | 'free';

export interface ChromaticInput {
  /** design columns without the scattering term (offsets, DM, evolution), row-major m × p0 */
  design: Float64Array;
  p0: number;
  /** index of the DM column */
  dmColumn: number;
  freqMhz: Float64Array;
  y: Float64Array;
  sigma: Float64Array;
  m: number;
}

export interface ModelScore {
  name: 'dm_only' | 'alpha_fixed' | 'alpha_free';
  n_params: number;
  chi2: number;
  dof: number;
  aic: number;
  bic: number;
  dm: number;
  dm_err: number;
  alpha?: number;
  tau_ref_us?: number;
}

export interface ChromaticResult {
  models: ModelScore[];
  preferred: ModelScore['name'];
  /** the model asked for (α fixed or free) */
  chosen: {
    dm: number;
    dmErr: number;
    chi2: number;
    dof: number;
    tauRefUs: number;
    tauRefErrUs: number;
    alpha: number;
    alphaErr: number | null;
    dmTauCov: number;
    offsets: number[];
    /** all parameters: offsets, DM, evolution terms, S (and α when fitted) */
    params: number[];
  };
  warnings: string[];
}

function score(
  name: ModelScore['name'],
  p: number,
  chi2: number,
  m: number,
  dm: number,
  dmErr: number,
): ModelScore {
  return {
    name,
    n_params: p,
    chi2,
    dof: m - p,
    aic: chi2 + 2 * p,
    bic: chi2 + p * Math.log(m),
    dm,
    dm_err: dmErr,
  };
}

function withScattering(inp: ChromaticInput, refMhz: number, alpha: number): Float64Array {
  const { design, p0, m } = inp;
  const p = p0 + 1;
  const d = new Float64Array(m * p);
  for (let r = 0; r < m; r++) {
    for (let c = 0; c < p0; c++) d[r * p + c] = design[r * p0 + c];
    d[r * p + p0] = (inp.freqMhz[r] / refMhz) ** -alpha;
  }
  return d;
}

export function chromaticFit(
  inp: ChromaticInput,
  mode: Exclude<ScatterMode, 'none'>,
  refMhz: number,
  fixedAlpha = KOLMOGOROV_ALPHA,
): ChromaticResult {
  const { p0, m, dmColumn } = inp;
  const warnings: string[] = [];
  const dmOnly = weightedLeastSquares(inp.design, inp.y, inp.sigma, m, p0);
  const models: ModelScore[] = [
    score(
      'dm_only',
      p0,
      dmOnly.chi2,
      m,
      dmOnly.params[dmColumn],
      Math.sqrt(dmOnly.cov[dmColumn * p0 + dmColumn]),
    ),
  ];
  const p1 = p0 + 1;
  if (m <= p1) throw new SingularDesignError(m);
  const fixed: WlsFit = weightedLeastSquares(
    withScattering(inp, refMhz, fixedAlpha),
    inp.y,
    inp.sigma,
    m,
    p1,
  );
  models.push({
    ...score(
      'alpha_fixed',
      p1,
      fixed.chi2,
      m,
      fixed.params[dmColumn],
      Math.sqrt(fixed.cov[dmColumn * p1 + dmColumn]),
    ),
    alpha: fixedAlpha,
    tau_ref_us: fixed.params[p0],
  });
  // α free: non-linear in α, started from the α-fixed solution
  const p2 = p0 + 2;
  let free: ReturnType<typeof lmFit> | undefined;
  if (m > p2) {
    const start = [...Array.from(fixed.params), fixedAlpha];
    free = lmFit({
      n: m,
      p: p2,
      y: inp.y,
      sigma: inp.sigma,
      start,
      min: [...new Array(p1).fill(-Infinity), 0.5],
      max: [...new Array(p1).fill(Infinity), 8],
      evaluate(ps, out, jac) {
        const alpha = ps[p1];
        for (let r = 0; r < m; r++) {
          let v = 0;
          for (let c = 0; c < p0; c++) v += inp.design[r * p0 + c] * ps[c];
          const x = inp.freqMhz[r] / refMhz;
          const s = x ** -alpha;
          v += ps[p0] * s;
          out[r] = v;
          if (jac) {
            for (let c = 0; c < p0; c++) jac[r * p2 + c] = inp.design[r * p0 + c];
            jac[r * p2 + p0] = s;
            jac[r * p2 + p1] = -ps[p0] * Math.log(x) * s;
          }
        }
      },
    });
    // With no scattering delay (τ = 0) α has no effect on the model: its Jacobian column is zero,
    // the covariance singular and every error undefined. The α-free model is then not a model.
    const usable =
      !free.singular &&
      [dmColumn * p2 + dmColumn, p0 * p2 + p0, p1 * p2 + p1].every((i) => {
        const v = free!.formalCov[i];
        return v >= 0 && Number.isFinite(v);
      });
    if (!usable) {
      warnings.push(
        'α is not constrained (the scattering term vanishes or trades off exactly with the others): α-free model skipped',
      );
      free = undefined;
    }
  } else {
    warnings.push(`too few arrival times (${m}) to fit α as well: α-free model skipped`);
  }
  if (free) {
    // lmFit scales errors by χ²_red; report the formal ones like the linear fits do
    models.push({
      ...score(
        'alpha_free',
        p2,
        free.chi2,
        m,
        free.params[dmColumn],
        Math.sqrt(free.formalCov[dmColumn * p2 + dmColumn]),
      ),
      alpha: free.params[p1],
      tau_ref_us: free.params[p0],
    });
    if (free.atBound[p1])
      warnings.push(
        `α ran to the edge of 0.5–8 (${free.params[p1].toFixed(2)}): the scattering term is not constrained`,
      );
  }
  const preferred = models.reduce((a, b) => (b.bic < a.bic ? b : a)).name;
  let chosen: ChromaticResult['chosen'];
  if (mode === 'free' && free) {
    const cov = free.formalCov; // formal, like the linear fits
    chosen = {
      dm: free.params[dmColumn],
      dmErr: Math.sqrt(cov[dmColumn * p2 + dmColumn]),
      chi2: free.chi2,
      dof: free.dof,
      tauRefUs: free.params[p0],
      tauRefErrUs: Math.sqrt(cov[p0 * p2 + p0]),
      alpha: free.params[p1],
      alphaErr: Math.sqrt(cov[p1 * p2 + p1]),
      dmTauCov: cov[dmColumn * p2 + p0],
      offsets: free.params.slice(0, dmColumn),
      params: free.params.slice(),
    };
  } else {
    if (mode === 'free') warnings.push('α-free fit impossible here: the α-fixed model is reported');
    chosen = {
      dm: fixed.params[dmColumn],
      dmErr: Math.sqrt(fixed.cov[dmColumn * p1 + dmColumn]),
      chi2: fixed.chi2,
      dof: fixed.dof,
      tauRefUs: fixed.params[p0],
      tauRefErrUs: Math.sqrt(fixed.cov[p0 * p1 + p0]),
      alpha: fixedAlpha,
      alphaErr: null,
      dmTauCov: fixed.cov[dmColumn * p1 + p0],
      offsets: Array.prototype.slice.call(fixed.params, 0, dmColumn) as number[],
      params: Array.from(fixed.params),
    };
  }
  return { models, preferred, chosen, warnings };
}
