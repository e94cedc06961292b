import type { DispersionConstant } from '../physics/constants.js';
import { addSeconds, formatMjd, parseMjd } from '../time/mjd.js';
import { wrapPhase } from './cube.js';
import { crossSpectra, type CubeContext } from './context.js';
import { crossAt } from './match.js';
import { DmShifter, matchedWeights, shiftPerDm, weightedCentreMhz } from './refine.js';
import { arrivalOffsetS, TOA_MJD_DECIMALS } from './toas.js';

/**
 * Joint phase + DM fit to all channels of a cube at once, in the Fourier domain — the
 * frequency-resolved ("wideband") method of Pennucci, Demorest & Ransom 2014 (ApJ 790, 93).
 *
 * Channel c's harmonics are modelled as a_c·T_ck·e^(−2πik(φ + d_c·ΔDM)), d_c the dispersive
 * shift per unit DM relative to a reference frequency ν₀. The amplitudes a_c are solved
 * analytically (a_c = C_c/Σ|T_ck|²), which leaves
 *
 *   χ²(φ, ΔDM) = Σ_c (Σ_k|P_ck|² − C_c(θ_c)²/Σ_k|T_ck|²)/s_c²,   θ_c = φ + d_c·ΔDM,
 *
 * C_c the cross-correlation of channel c with its template (see match.ts). Its minimum is found
 * by damped Newton steps on the analytic gradient and Hessian, started from the best S/N of a
 * coarse trial-DM grid; the covariance of (φ, ΔDM) is (½∂²χ²)⁻¹ at the minimum. The reported
 * arrival time is taken at the frequency where φ and DM are uncorrelated (their covariance is
 * zero), as that paper recommends.
 */
export interface JointFit {
  status: 'fitted' | 'unconstrained';
  source: string;
  mjd: string;
  /** the arrival time (decimal MJD text) at freqMhz */
  toaMjd: string | null;
  freqMhz: number;
  errUs: number | null;
  dm: number | null;
  dmErr: number | null;
  /** covariance of the phase at the band's weighted centre with DM, as a correlation */
  phaseDmCorr: number | null;
  snr: number;
  nChannels: number;
  chi2: number;
  dof: number;
  reducedChi2: number | null;
  warnings: string[];
}

interface State {
  q: number;
  g: [number, number];
  /** Hessian of Q: [φφ, φΔ, ΔΔ] */
  hq: [number, number, number];
}

/** At least this many usable channels for a DM (two unknowns plus a check). */
const MIN_CHANNELS = 3;

export function jointFit(ctx: CubeContext, k: DispersionConstant, minSnr: number): JointFit {
  const { cube, template, x } = ctx;
  const h = x.h;
  const warnings = [...template.warnings];
  // channels: unflagged, with a finite noise and some signal
  const used: number[] = [];
  ctx.matches.forEach((m, c) => {
    if (m && ctx.s2[c] > 0 && m.amp > 0) used.push(c);
  });
  const centre = weightedCentreMhz(ctx);
  const base = {
    source: cube.source,
    mjd: cube.mjd,
    freqMhz: centre,
    nChannels: used.length,
  };
  const dAll = shiftPerDm(cube.freqs, cube.periodS, centre, k);
  const strong = used.filter((c) => ctx.matches[c]!.snr >= minSnr).length;
  const fmin = Math.min(...used.map((c) => cube.freqs[c]));
  const fmax = Math.max(...used.map((c) => cube.freqs[c]));
  const unconstrained = (
    why: string,
    fit: { snr: number; chi2: number; dof: number; red: number | null } = {
      snr: 0,
      chi2: NaN,
      dof: 0,
      red: null,
    },
  ): JointFit => ({
    ...base,
    status: 'unconstrained',
    toaMjd: null,
    errUs: null,
    dm: null,
    dmErr: null,
    phaseDmCorr: null,
    snr: fit.snr,
    chi2: fit.chi2,
    dof: fit.dof,
    reducedChi2: fit.red,
    warnings: [...warnings, why],
  });
  if (used.length < MIN_CHANNELS || strong === 0 || !(fmax > fmin)) {
    return unconstrained(
      `too little signal for a joint fit: ${used.length} usable channel(s), ${strong} with S/N ≥ ${minSnr}, spanning ${fmin}–${fmax} MHz`,
    );
  }

  // cross-spectra Z_ck = P_ck T̄_ck and the per-channel scales 1/(Σ|T|²·s²)
  const { re: zre, im: zim } = crossSpectra(ctx, used);
  const scale = Float64Array.from(
    used,
    (c) => 1 / (template.harm.power[template.rowOf[c]] * ctx.s2[c]),
  );
  const d = Float64Array.from(used, (c) => dAll[c]);
  let resid0 = 0;
  for (const c of used) resid0 += x.power[c] / ctx.s2[c];

  const tmp = new Float64Array(3);
  const evaluate = (phi: number, delta: number): State => {
    let q = 0;
    let gp = 0;
    let gd = 0;
    let hpp = 0;
    let hpd = 0;
    let hdd = 0;
    for (let u = 0; u < used.length; u++) {
      crossAt(zre, zim, u * h, h, phi + d[u] * delta, tmp);
      const [c0, c1, c2] = tmp;
      const s = scale[u];
      q += s * c0 * c0;
      const g = 2 * s * c0 * c1;
      gp += g;
      gd += g * d[u];
      const hh = 2 * s * (c1 * c1 + c0 * c2);
      hpp += hh;
      hpd += hh * d[u];
      hdd += hh * d[u] * d[u];
    }
    return { q, g: [gp, gd], hq: [hpp, hpd, hdd] };
  };

  // start: the best S/N over a coarse grid of ΔDM spanning ±½ turn of shift across the band
  const span = Math.max(...d) - Math.min(...d);
  const shifter = new DmShifter(ctx, matchedWeights(ctx), dAll);
  const range = 0.5 / span;
  let bestDelta = 0;
  let bestSnr = -Infinity;
  let bestPhase = 0;
  const nGrid = 64;
  for (let j = -nGrid; j <= nGrid; j++) {
    const delta = (range * j) / nGrid;
    const r = shifter.snrAt(delta);
    if (r.snr > bestSnr) {
      bestSnr = r.snr;
      bestDelta = delta;
      bestPhase = r.phase;
    }
  }

  // damped Newton on Q = Σ s·C² (χ² = const − Q), from the grid's best point
  let phi = bestPhase;
  let delta = bestDelta;
  let st = evaluate(phi, delta);
  let lambda = 1e-3;
  for (let it = 0; it < 100; it++) {
    // solve (−H + λ·diag(−H)) step = g
    const a11 = -st.hq[0] * (1 + lambda);
    const a22 = -st.hq[2] * (1 + lambda);
    const a12 = -st.hq[1];
    const det = a11 * a22 - a12 * a12;
    let sp: number;
    let sd: number;
    if (a11 > 0 && a22 > 0 && det > 0) {
      sp = (a22 * st.g[0] - a12 * st.g[1]) / det;
      sd = (a11 * st.g[1] - a12 * st.g[0]) / det;
    } else {
      // not concave here: a small gradient step
      lambda *= 10;
      const gn = Math.hypot(st.g[0], st.g[1] / Math.max(span, 1e-300)) || 1;
      sp = (1e-3 * st.g[0]) / gn;
      sd = (1e-3 * st.g[1]) / gn / Math.max(span, 1e-300);
    }
    const trial = evaluate(phi + sp, delta + sd);
    if (trial.q >= st.q) {
      const small = Math.abs(sp) < 1e-12 && Math.abs(sd * span) < 1e-12;
      phi += sp;
      delta += sd;
      st = trial;
      lambda = Math.max(lambda / 10, 1e-12);
      if (small) break;
    } else {
      lambda *= 10;
      if (lambda > 1e12) break;
    }
  }

  // covariance (½ ∂²χ²)⁻¹ = (−½ ∂²Q)⁻¹
  const f11 = -st.hq[0] / 2;
  const f12 = -st.hq[1] / 2;
  const f22 = -st.hq[2] / 2;
  const det = f11 * f22 - f12 * f12;
  const chi2 = resid0 - st.q;
  const dof = used.length * 2 * h - (used.length + 2);
  const red = dof > 0 ? chi2 / dof : null;
  const snr = Math.sqrt(Math.max(st.q - used.length, 0));
  if (!(f11 > 0 && f22 > 0 && det > 0)) {
    return unconstrained('the joint fit found no proper minimum (flat or saddle χ²)', {
      snr,
      chi2,
      dof,
      red,
    });
  }
  const varPhi = f22 / det;
  const varDm = f11 / det;
  const cov = -f12 / det;
  // the zero-covariance frequency: φ(ν) = φ + ΔDM·K(ν⁻² − ν₀⁻²)/P has cov(φ(ν), DM) = 0 at
  // u* = −cov/var(DM) turns per DM unit
  const u = -cov / varDm;
  const invNu2 = 1 / (centre * centre) + (u * cube.periodS) / k.value;
  let freq = centre;
  let phase = phi;
  let varPhase = varPhi;
  if (invNu2 > 0) {
    freq = 1 / Math.sqrt(invNu2);
    phase = phi + u * delta;
    varPhase = varPhi - (cov * cov) / varDm;
  } else {
    warnings.push(
      'phase and DM stay correlated at every frequency: the arrival time is given at the weighted band centre',
    );
  }
  // `phase` is the pulse's phase at `freq` in the cube's dedispersed frame (ΔDM's delay
  // relative to ν₀ included); arrivalOffsetS adds back the delay dedispersion at DM₀ removed
  phase = wrapPhase(phase);
  const epoch = addSeconds(
    parseMjd(cube.mjd),
    arrivalOffsetS(cube, phase + template.fiducial, freq, k),
  );
  if (red !== null && red > 1.5)
    warnings.push(
      `reduced χ² ${red.toFixed(2)}: the template does not describe every channel (profile evolution or scattering?)`,
    );
  if (Math.abs(delta) > 0.45 * range)
    warnings.push(
      'the fitted DM is near the edge of one turn of shift across the band: check for a wrapped solution',
    );
  return {
    ...base,
    freqMhz: freq,
    status: 'fitted',
    toaMjd: formatMjd(epoch, TOA_MJD_DECIMALS),
    errUs: Math.sqrt(Math.max(varPhase, 0)) * cube.periodS * 1e6,
    dm: cube.dmApplied + delta,
    dmErr: Math.sqrt(varDm),
    phaseDmCorr: cov / Math.sqrt(varPhi * varDm),
    snr,
    chi2,
    dof,
    reducedChi2: red,
    warnings,
  };
}
