import { Fft2, nextPow2 } from '../dsp/fft2.js';

/**
 * Secondary spectrum: |FFT₂(ΔI)|² in dB (science.md), ΔI the dynamic spectrum (flags filled by
 * interpolation) minus its mean, tapered by a 2-D Hann window against leakage from the edges
 * and zero-padded to powers of two (common practice). Axes: conjugate time f_t in mHz (from the
 * sub-integration step) and delay τ in µs (1/MHz), both centred on zero.
 */
export interface SecondarySpectrum {
  /** rows: delay, columns: conjugate time; db[r·nFt + c] */
  db: Float64Array;
  nDelay: number;
  nFt: number;
  /** axis steps and the value of row/column 0 */
  delayStepUs: number;
  ftStepMhz: number;
  delay0Us: number;
  ft0Mhz: number;
}

export function secondarySpectrum(
  filled: Float64Array,
  nchan: number,
  nsub: number,
  dfMhz: number,
  dtS: number,
): SecondarySpectrum {
  const R = nextPow2(nchan);
  const C = nextPow2(nsub);
  let mean = 0;
  for (let i = 0; i < filled.length; i++) mean += filled[i] / filled.length;
  const a = new Float64Array(2 * R * C);
  for (let c = 0; c < nchan; c++) {
    const wc = 0.5 - 0.5 * Math.cos((2 * Math.PI * (c + 0.5)) / nchan);
    for (let t = 0; t < nsub; t++) {
      const wt = 0.5 - 0.5 * Math.cos((2 * Math.PI * (t + 0.5)) / nsub);
      a[2 * (c * C + t)] = (filled[c * nsub + t] - mean) * wc * wt;
    }
  }
  new Fft2(R, C).transform(a, false, nchan);
  const db = new Float64Array(R * C);
  let max = 0;
  for (let i = 0; i < R * C; i++) max = Math.max(max, a[2 * i] ** 2 + a[2 * i + 1] ** 2);
  const floor = max * 1e-12 || 1e-300;
  // fftshift: row k ↦ (k + R/2) mod R, so zero delay and zero f_t sit at R/2, C/2
  for (let k = 0; k < R; k++) {
    const rk = (k + R / 2) % R;
    for (let l = 0; l < C; l++) {
      const cl = (l + C / 2) % C;
      const i = k * C + l;
      db[rk * C + cl] = 10 * Math.log10(a[2 * i] ** 2 + a[2 * i + 1] ** 2 + floor);
    }
  }
  const delayStepUs = 1 / (R * dfMhz);
  const ftStepMhz = 1e3 / (C * dtS);
  return {
    db,
    nDelay: R,
    nFt: C,
    delayStepUs,
    ftStepMhz,
    delay0Us: (-R / 2) * delayStepUs,
    ft0Mhz: (-C / 2) * ftStepMhz,
  };
}

/** Power (dB) at (delay µs, f_t mHz) by bilinear interpolation; NaN off the grid. */
function dbAt(s: SecondarySpectrum, delayUs: number, ftMhz: number): number {
  const r = (delayUs - s.delay0Us) / s.delayStepUs;
  const c = (ftMhz - s.ft0Mhz) / s.ftStepMhz;
  if (r < 0 || c < 0 || r > s.nDelay - 1 || c > s.nFt - 1) return NaN;
  const r0 = Math.min(Math.floor(r), s.nDelay - 2);
  const c0 = Math.min(Math.floor(c), s.nFt - 2);
  const fr = r - r0;
  const fc = c - c0;
  const v = (rr: number, cc: number) => s.db[rr * s.nFt + cc];
  return (
    (1 - fr) * ((1 - fc) * v(r0, c0) + fc * v(r0, c0 + 1)) +
    fr * ((1 - fc) * v(r0 + 1, c0) + fc * v(r0 + 1, c0 + 1))
  );
}

export interface ArcFit {
  /** curvature η of f_τ = η·f_t² (µs/mHz², numerically s³) */
  eta: number;
  /** the η range where the mean power along the parabola stays within its noise of the best */
  etaLo: number;
  etaHi: number;
  /** mean power (dB, median-polished) along the best parabola above the median trial */
  contrastDb: number;
  /** the trial curve: η and mean power along its parabola (dB) */
  curve: Array<{ eta: number; power_db: number }>;
}

/**
 * Arc curvature (Stinebring et al. 2001, from memory: f_τ = η f_t²) by the mean power along
 * trial parabolas: η on a logarithmic grid spanning parabolas that reach the top of the delay
 * axis between 2 and all f_t columns from the origin; the mean dB power along each (both signs
 * of f_t, positive delays beyond two delay bins, where the parabola is on the grid, leaving out
 * the scintles' core around f_t = 0), after a median polish of rows and columns so separable
 * structure cannot favour any parabola. A maximum on the edge of the trials is no arc; the
 * maximum is refined by a parabola in log η, and the range where the curve is within its own
 * noise (robust σ of its point-to-point differences/√2) of the maximum is the uncertainty.
 */
export function fitArc(
  s: SecondarySpectrum,
  opts: { trials?: number; coreFtMhz?: number } = {},
): ArcFit | null {
  const trials = opts.trials ?? 200;
  // the scintles' own power sits around f_t = 0: leave out three columns either side of zero
  // (or `coreFtMhz`)
  const minFt = Math.max(3 * s.ftStepMhz, opts.coreFtMhz ?? 0);
  const tauMax = (s.nDelay / 2 - 1) * s.delayStepUs;
  const ftMax = (s.nFt / 2 - 1) * s.ftStepMhz;
  // from parabolas that reach only eight delay rows at the largest f_t to ones that reach the
  // top of the delay axis two columns from zero
  const etaMin = (8 * s.delayStepUs) / ftMax ** 2;
  const etaMax = tauMax / (2 * s.ftStepMhz) ** 2;
  if (!(etaMax > etaMin)) return null;
  const minDelay = 2 * s.delayStepUs;
  // median polish, one pass: each delay row and each f_t column relative to its median (dB),
  // so any separable structure — the noise floor, the scintles' core, power falling with
  // delay — averages to zero along every parabola and only a curved ridge stands out
  const rowMedian = new Float64Array(s.nDelay);
  for (let r = 0; r < s.nDelay; r++) {
    const row = Array.from(s.db.subarray(r * s.nFt, (r + 1) * s.nFt)).sort((a, b) => a - b);
    rowMedian[r] = row[row.length >> 1];
  }
  const colMedian = new Float64Array(s.nFt);
  const col: number[] = [];
  for (let c = 0; c < s.nFt; c++) {
    col.length = 0;
    for (let r = 0; r < s.nDelay; r++) col.push(s.db[r * s.nFt + c] - rowMedian[r]);
    col.sort((a, b) => a - b);
    colMedian[c] = col[col.length >> 1];
  }
  const rel: SecondarySpectrum = {
    ...s,
    db: s.db.map((v, i) => v - rowMedian[Math.floor(i / s.nFt)] - colMedian[i % s.nFt]),
  };
  // the scintles' core: where the zero-delay row stays above half its peak (dB − 3)
  const zeroRow = s.nDelay / 2;
  const centre = s.nFt / 2;
  const peak = rel.db[zeroRow * s.nFt + centre];
  let core = 0;
  while (core < s.nFt / 4 && rel.db[zeroRow * s.nFt + centre + core + 1] > peak - 3) core++;
  const excludeFt = Math.max(minFt, (core + 1) * s.ftStepMhz);
  const curve: Array<{ eta: number; power_db: number }> = [];
  for (let i = 0; i < trials; i++) {
    const eta = etaMin * (etaMax / etaMin) ** (i / (trials - 1));
    let sum = 0;
    let n = 0;
    for (let c = 1; c < s.nFt / 2; c++) {
      const ft = c * s.ftStepMhz;
      if (ft < excludeFt) continue;
      const delay = eta * ft * ft;
      if (delay < minDelay) continue;
      if (delay > tauMax) break;
      for (const sign of [-1, 1]) {
        const v = dbAt(rel, delay, sign * ft);
        if (Number.isFinite(v)) {
          sum += v;
          n++;
        }
      }
    }
    if (n >= 4) curve.push({ eta, power_db: sum / n });
  }
  if (curve.length < 5) return null;
  const step = curve.map((p) => p.power_db);
  let best = 0;
  for (let i = 1; i < curve.length; i++) if (step[i] > step[best]) best = i;
  // a maximum on the edge of the trials is no arc
  if (best === 0 || best === curve.length - 1) return null;
  // parabola through the best and its neighbours in log η
  let logEta = Math.log(curve[best].eta);
  {
    const [x0, x1, x2] = [best - 1, best, best + 1].map((i) => Math.log(curve[i].eta));
    const [y0, y1, y2] = [best - 1, best, best + 1].map((i) => step[i]);
    const den = (x0 - x1) * (x0 - x2) * (x1 - x2);
    const A = (x2 * (y1 - y0) + x1 * (y0 - y2) + x0 * (y2 - y1)) / den;
    const B = (x2 * x2 * (y0 - y1) + x1 * x1 * (y2 - y0) + x0 * x0 * (y1 - y2)) / den;
    if (A < 0) logEta = Math.min(Math.max(-B / (2 * A), x0), x2);
  }
  // the curve's own noise: robust σ of its point-to-point differences / √2
  const diffs = step
    .slice(1)
    .map((v, i) => Math.abs(v - step[i]))
    .sort((a, b) => a - b);
  const noise = (1.4826 * diffs[Math.floor(diffs.length / 2)]) / Math.SQRT2;
  const top = step[best];
  let lo = best;
  while (lo > 0 && step[lo - 1] >= top - noise) lo--;
  let hi = best;
  while (hi < curve.length - 1 && step[hi + 1] >= top - noise) hi++;
  const med = [...step].sort((a, b) => a - b)[step.length >> 1];
  return {
    eta: Math.exp(logEta),
    etaLo: curve[Math.max(0, lo - 1)].eta,
    etaHi: curve[Math.min(curve.length - 1, hi + 1)].eta,
    contrastDb: top - med,
    curve,
  };
}
