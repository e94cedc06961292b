import type { DispersionConstant } from '../physics/constants.js';
import type { ToaTable } from '../formats/toa-table.js';
import { InputError } from '../formats/errors.js';
import { weightedLeastSquares, weightedLine, SingularDesignError, type WlsFit } from './wls.js';
import { orderBySourceAndTime, visitBounds, type VisitGrouping } from './visits.js';
import { addSeconds, diffSeconds, formatMjd } from '../time/mjd.js';
import { chi2Sf } from '../stats/gamma.js';
import { chromaticFit, type ModelScore, type ScatterMode } from './chromatic.js';
import { KOLMOGOROV_ALPHA } from '../profiles/empirical.js';
import { robustSigma } from '../stats/summary.js';

export interface DmFitOptions {
  constant: DispersionConstant;
  grouping: VisitGrouping;
  /** pulse period for folding arrival-time offsets (a period_s column takes precedence) */
  periodS?: number;
  /** iterative outlier clipping threshold in σ; undefined = no clipping */
  clipSigma?: number;
  /** degree of the profile-evolution polynomial in log10(ν / 1 GHz); 0 = none */
  evolution: number;
  /** chromatic fit: a scattering term with α held fixed or fitted (default none) */
  scatter?: ScatterMode;
  /** α for the fixed-α model (default 4.4, Kolmogorov) */
  alpha?: number;
  /** reference frequency of the scattering term, MHz (default 1000) */
  refFreqMhz?: number;
}

export interface VisitFit {
  source: string;
  mjd: number;
  mjd_first: number;
  mjd_last: number;
  n_toas: number;
  n_freqs: number;
  freq_min_mhz: number;
  freq_max_mhz: number;
  status: 'fitted' | 'unconstrained';
  dm: number | null;
  dm_err: number | null;
  dm_err_scaled: number | null;
  dm_kind: 'absolute' | 'offset';
  offset_us: number | null;
  receiver_offsets_us?: Record<string, number>;
  evolution_us?: number[];
  t_inf_mjd?: string;
  /** chromatic fits: scattering delay change at ref_freq_mhz, its index, the models compared */
  tau_ref_us?: number;
  tau_ref_err_us?: number;
  alpha?: number;
  alpha_err?: number | null;
  ref_freq_mhz?: number;
  dm_tau_cov?: number;
  dm_tau_corr?: number;
  models?: ModelScore[];
  preferred?: ModelScore['name'];
  chi2: number | null;
  dof: number | null;
  reduced_chi2: number | null;
  chi2_p_value: number | null;
  flagged_rows: number[];
  warnings: string[];
  model: string;
}

/** Ratio ν_max/ν_min below which the DM lever arm is weak (common practice). */
export const WEAK_LEVER_ARM = 1.2;
/** Two-sided probability below which a χ² is called improbable. */
export const CHI2_ALARM_P = 1e-3;

/** Fit every visit of every source in the table. */
export function fitDmVisits(table: ToaTable, opts: DmFitOptions): VisitFit[] {
  const out: VisitFit[] = [];
  forEachDmVisit(table, opts, (v) => out.push(v));
  return out;
}

/**
 * Fit every visit of every source, handing each fit to `onVisit` as soon as it is made (in
 * source, then time order), so a caller can write visits out rather than hold them all.
 * The table's cached MJD column is let go once the visits are found. Returns the visit count.
 */
export function forEachDmVisit(
  table: ToaTable,
  opts: DmFitOptions,
  onVisit: (v: VisitFit) => void,
): number {
  const order = orderBySourceAndTime(table);
  const fit = table.header.hasDm ? combineWidebandVisit : fitVisit;
  const bounds = visitBounds(table, order, opts.grouping);
  table.releaseMjdColumn();
  for (let k = 0; k + 1 < bounds.length; k++)
    onVisit(fit(table, order.subarray(bounds[k], bounds[k + 1]), opts));
  return Math.max(0, bounds.length - 1);
}

/**
 * Wideband arrival times (a `dm` and `dm_err` per row, as `toas extract --joint` writes them)
 * already carry a DM each: a visit's DM is their inverse-variance weighted mean, with
 * χ² = Σ (DM_i − mean)²/σ_i² on n − 1 degrees of freedom, and the error scaled by √χ²_red
 * when that exceeds 1. A visit with one row reports that row's DM.
 */
export function combineWidebandVisit(
  table: ToaTable,
  rows: ArrayLike<number>,
  opts: DmFitOptions,
): VisitFit {
  const n = rows.length;
  let fmin = Infinity;
  let fmax = -Infinity;
  let mjdSum = 0;
  let sw = 0;
  let swd = 0;
  for (let j = 0; j < n; j++) {
    const i = rows[j];
    fmin = Math.min(fmin, table.freqMhz(i));
    fmax = Math.max(fmax, table.freqMhz(i));
    mjdSum += table.mjd(i);
    const w = 1 / table.dmErrOf(i) ** 2;
    sw += w;
    swd += w * table.dmOf(i);
  }
  const dm = swd / sw;
  let chi2 = 0;
  for (let j = 0; j < n; j++) {
    const i = rows[j];
    chi2 += ((table.dmOf(i) - dm) / table.dmErrOf(i)) ** 2;
  }
  const dof = n - 1;
  const red = dof > 0 ? chi2 / dof : null;
  const chi2P = dof > 0 ? chi2Sf(chi2, dof) : null;
  const dmErr = 1 / Math.sqrt(sw);
  const warnings: string[] = [];
  if (opts.evolution > 0 || (opts.scatter && opts.scatter !== 'none'))
    warnings.push(
      'wideband arrival times carry their own DM: profile evolution and scattering terms do not apply and were not fitted',
    );
  if (chi2P !== null && chi2P < CHI2_ALARM_P)
    warnings.push(
      `the ${n} DMs of this visit disagree (reduced χ² = ${red!.toFixed(2)}, p = ${chi2P.toExponential(1)}): scaled error reported`,
    );
  const active = new Uint8Array(n).fill(1);
  return visitRecord(
    {
      source: table.sources[table.sourceId(rows[0])],
      mjd: round(mjdSum / n, 1e-7),
      mjdFirst: round(table.mjd(rows[0]), 1e-7, Math.floor),
      mjdLast: round(table.mjd(rows[n - 1]), 1e-7, Math.ceil),
      n,
      nFreqs: countDistinctFrequencies(table, rows, active),
      fmin,
      fmax,
      dmKind: 'absolute',
    },
    {
      dm,
      dmErr,
      dmErrScaled: red !== null && red > 1 ? dmErr * Math.sqrt(red) : dmErr,
      offsetUs: null,
      chi2,
      dof,
      reducedChi2: red,
      chi2P,
    },
    [],
    warnings,
    'wideband: inverse-variance mean of the arrival times’ own DMs',
  );
}

const modelNames = new Map<string, string>();
/** A table without a receiver column has one unnamed offset. */
const NO_RECEIVERS = [''];

const plainModelNames: string[] = [];

function describeModel(receivers: string[], evolution: number, residual: boolean): string {
  if (receivers === NO_RECEIVERS) {
    const slot = evolution * 2 + (residual ? 1 : 0);
    return (plainModelNames[slot] ??= modelName(receivers, evolution, residual));
  }
  const key = `${receivers.join('\u0000')}|${evolution}|${residual}`;
  let name = modelNames.get(key);
  if (name === undefined) {
    name = modelName(receivers, evolution, residual);
    if (modelNames.size < 1000) modelNames.set(key, name);
  }
  return name;
}

function modelName(names: string[], evolution: number, residual: boolean): string {
  const receivers = names.filter(Boolean);
  const offset = receivers.length > 1 ? `offsets per receiver (${receivers.join(', ')})` : 'offset';
  const evo = evolution > 0 ? ` + profile evolution (degree ${evolution} in log10 ν/GHz)` : '';
  return `${residual ? 'residual' : 'arrival time'} = ${offset} + K·DM/ν²${evo}`;
}

/** Fit one visit: rows are indices into the table. */
export function fitVisit(table: ToaTable, rows: ArrayLike<number>, opts: DmFitOptions): VisitFit {
  const residualMode = table.header.hasResidual;
  const n = rows.length;
  const k = opts.constant.value;
  let fmin = Infinity;
  let fmax = -Infinity;
  let mjdSum = 0;
  let ref = rows[0];
  for (let j = 0; j < n; j++) {
    const i = rows[j];
    const f = table.freqMhz(i);
    if (f < fmin) fmin = f;
    if (f > fmax) {
      fmax = f;
      ref = i;
    }
    mjdSum += table.mjd(i);
  }
  const source = table.sources[table.sourceId(rows[0])];
  const mjd = mjdSum / n;
  const active = new Uint8Array(n).fill(1);
  const nFreqs = countDistinctFrequencies(table, rows, active);
  const hasReceivers = table.header.hasReceiver;
  const head: VisitHead = {
    source,
    mjd: round(mjd, 1e-7),
    mjdFirst: round(table.mjd(rows[0]), 1e-7, Math.floor),
    mjdLast: round(table.mjd(rows[n - 1]), 1e-7, Math.ceil),
    n,
    nFreqs,
    fmin,
    fmax,
    dmKind: residualMode ? 'offset' : 'absolute',
  };
  const warnings: string[] = [];
  if (nFreqs < 2) {
    warnings.push('fewer than two distinct frequencies: DM is not constrained, visit not fitted');
    return visitRecord(
      head,
      undefined,
      flaggedRows(table, rows, active),
      warnings,
      describeModel(receiverNames(table, rows, active), opts.evolution, residualMode),
    );
  }

  // with pulse numbers the offsets need no folding; the period only converts pulse differences
  let samePulse = table.header.hasPulse;
  for (let j = 1; samePulse && j < n; j++)
    samePulse = table.pulseNumber(rows[j]) === table.pulseNumber(rows[0]);
  if (!residualMode && opts.periodS === undefined && !table.header.hasPeriod && !samePulse) {
    throw new InputError(
      table.header.hasPulse
        ? 'these arrival times have different pulse numbers: give the period (--period-s or a period_s column) to relate them'
        : 'arrival times without residuals need the pulse period to fold their offsets: give --period-s or a period_s column, pulse numbers in a pulse column (or fit timing residuals with a residual_us column)',
      { column: table.header.hasPulse ? 'pulse' : 'residual_us' },
    );
  }
  // Data: residuals as given, or arrival-time offsets from the highest-frequency arrival.
  const { y, sigma, ya, sa, x, residuals, activeIdx } = scratchFor(n);
  let periodUsed: number | undefined;
  for (let j = 0; j < n; j++) {
    const i = rows[j];
    sigma[j] = table.errUs(i);
    if (residualMode) {
      y[j] = table.residualUs(i);
    } else {
      let o = diffSeconds(table.epoch(i), table.epoch(ref));
      const rowPeriod = table.periodS(i);
      const p = Number.isFinite(rowPeriod) ? rowPeriod : opts.periodS;
      if (table.header.hasPulse) {
        // known pulse numbers: arrival times of pulse N + m are m periods later, no fold
        const dp = table.pulseNumber(i) - table.pulseNumber(ref);
        if (dp !== 0) o -= p! * dp;
      } else if (p !== undefined) {
        // fold into [−P/4, 3P/4): dispersive delays relative to the top frequency are ≥ 0
        o -= p * Math.floor((o + p / 4) / p);
        periodUsed = p;
      }
      y[j] = o * 1e6;
    }
  }

  let fit: WlsFit | undefined;
  let receivers: string[];
  let p: number;
  for (;;) {
    let m = 0;
    for (let j = 0; j < n; j++) if (active[j]) activeIdx[m++] = j;
    receivers = receiverNames(table, rows, active);
    const nOff = receivers.length;
    p = nOff + 1 + opts.evolution;
    // one offset and DM only: the closed-form line fit (same solution as QR, far fewer steps)
    const line = p === 2;
    const design = line ? x : new Float64Array(m * p);
    for (let r = 0; r < m; r++) {
      const j = activeIdx[r];
      const i = rows[j];
      const f = table.freqMhz(i);
      ya[r] = y[j];
      sa[r] = sigma[j];
      if (line) {
        design[r] = (k * 1e6) / (f * f);
        continue;
      }
      const off = hasReceivers ? receivers.indexOf(table.receivers[table.receiverId(i)]) : 0;
      design[r * p + off] = 1;
      design[r * p + nOff] = (k * 1e6) / (f * f);
      const l = Math.log10(f / 1000);
      let lp = 1;
      for (let e = 1; e <= opts.evolution; e++) {
        lp *= l;
        design[r * p + nOff + e] = lp;
      }
    }
    try {
      fit = line
        ? weightedLine(design, ya, sa, m, residuals)
        : weightedLeastSquares(design, ya.subarray(0, m), sa.subarray(0, m), m, p);
    } catch (e) {
      if (!(e instanceof SingularDesignError)) throw e;
      warnings.push(
        m < p
          ? `${m} arrival times cannot fix ${p} parameters: visit not fitted`
          : 'DM cannot be separated from the receiver offsets or evolution terms (does each receiver cover only one frequency?): visit not fitted',
      );
      return visitRecord(
        head,
        undefined,
        flaggedRows(table, rows, active),
        warnings,
        describeModel(receivers, opts.evolution, residualMode),
      );
    }
    if (opts.clipSigma === undefined || fit.dof < 2) break;
    const z = new Float64Array(m);
    let worst = 0;
    for (let r = 0; r < m; r++) {
      z[r] = fit.residuals[r] / sa[r];
      if (Math.abs(z[r]) > Math.abs(z[worst])) worst = r;
    }
    // scale by a robust spread so globally misjudged errors do not clip everything
    const spread = Math.max(1, robustSigma(z));
    if (Math.abs(z[worst]) / spread <= opts.clipSigma) break;
    active[activeIdx[worst]] = 0;
    if (countDistinctFrequencies(table, rows, active) < 2) {
      active[activeIdx[worst]] = 1;
      break;
    }
  }
  const nOff = receivers.length;
  const dm = fit.params[nOff];
  const dmErr = Math.sqrt(fit.cov[nOff * p + nOff]);
  const red = fit.dof > 0 ? fit.chi2 / fit.dof : null;
  const chi2P = fit.dof > 0 ? chi2Sf(fit.chi2, fit.dof) : null;
  const out = visitRecord(
    head,
    {
      dm,
      dmErr,
      dmErrScaled: red !== null && red > 1 ? dmErr * Math.sqrt(red) : dmErr,
      offsetUs: fit.params[0],
      chi2: fit.chi2,
      dof: fit.dof,
      reducedChi2: red,
      chi2P,
    },
    flaggedRows(table, rows, active),
    warnings,
    describeModel(receivers, opts.evolution, residualMode),
  );
  // parameters, χ² and dof of the model reported: the chromatic one when asked for
  let used: ArrayLike<number> = fit.params;
  if (opts.scatter && opts.scatter !== 'none') {
    used = applyChromatic(out, table, rows, active, receivers, y, sigma, opts) ?? fit.params;
  }
  const usedDof = out.dof ?? fit.dof;
  const usedRed = out.reduced_chi2;
  const usedDm = out.dm ?? dm;
  if (hasReceivers && nOff > 1) {
    out.receiver_offsets_us = Object.fromEntries(receivers.map((r, i) => [r, used[i]]));
  }
  if (opts.evolution > 0) {
    out.evolution_us = Array.prototype.slice.call(used, nOff + 1, nOff + 1 + opts.evolution);
  }
  if (!residualMode) {
    out.t_inf_mjd = formatMjd(
      addSeconds(table.epoch(ref), used[0] * 1e-6),
      Math.max(18, table.mjdDecimals),
    );
  }
  // the lever arm of the arrival times actually fitted (clipped ones excluded)
  let usedMin = Infinity;
  let usedMax = -Infinity;
  for (let j = 0; j < n; j++) {
    if (!active[j]) continue;
    const f = table.freqMhz(rows[j]);
    usedMin = Math.min(usedMin, f);
    usedMax = Math.max(usedMax, f);
  }
  if (usedMax / usedMin < WEAK_LEVER_ARM) {
    out.warnings.push(
      `weak lever arm: ν_max/ν_min = ${(usedMax / usedMin).toFixed(3)} < ${WEAK_LEVER_ARM}; DM is poorly constrained`,
    );
  }
  if (usedDof === 0) {
    out.warnings.push('no degrees of freedom left: χ² and the fit quality cannot be judged');
  } else if (out.chi2_p_value !== null && usedRed !== null) {
    if (out.chi2_p_value < CHI2_ALARM_P) {
      out.warnings.push(
        `reduced χ² = ${usedRed.toFixed(2)} is improbably large for ${usedDof} dof (p = ${out.chi2_p_value.toExponential(1)}): errors underestimated or model incomplete; scaled error reported`,
      );
    } else if (1 - out.chi2_p_value < CHI2_ALARM_P) {
      out.warnings.push(
        `reduced χ² = ${usedRed.toFixed(2)} is improbably small for ${usedDof} dof: errors may be overestimated`,
      );
    }
  }
  if (periodUsed !== undefined) {
    // Folding cannot tell a sweep of s from s + P: a fit that cannot be checked, fits badly or
    // gives a negative absolute DM is withheld rather than reported as a number.
    const doubt =
      usedDof === 0
        ? 'with as many parameters as distinct arrival times the fold cannot be checked'
        : out.chi2_p_value !== null && out.chi2_p_value < CHI2_ALARM_P
          ? `the fit is poor (p = ${out.chi2_p_value.toExponential(1)})`
          : usedDm < 0
            ? `the absolute DM came out negative (${usedDm.toPrecision(4)})`
            : undefined;
    if (doubt) {
      const withheld = visitRecord(head, undefined, out.flagged_rows, warnings, out.model);
      warnings.push(
        `offsets were folded modulo the period and ${doubt}: the band sweep may exceed the fold range (aliased DM), so no DM is given; fit timing residuals instead`,
      );
      return withheld;
    }
  }
  if (out.flagged_rows.length) {
    out.warnings.push(
      `${out.flagged_rows.length} arrival time(s) clipped beyond ${opts.clipSigma}σ`,
    );
  }
  if (periodUsed !== undefined) {
    const sweepS = k * Math.abs(usedDm) * (1 / (fmin * fmin) - 1 / (fmax * fmax));
    if (sweepS > periodUsed / 2) {
      throw new InputError(
        `${source} visit at MJD ${mjd.toFixed(4)}: the dispersive sweep across ${fmin}–${fmax} MHz (${(sweepS * 1e3).toFixed(3)} ms at DM ${usedDm.toFixed(3)}) exceeds half the period (${((periodUsed / 2) * 1e3).toFixed(3)} ms), so offsets modulo the period are ambiguous; fit timing residuals (residual_us) instead`,
        { row: table.row(ref), column: 'mjd' },
      );
    }
  }
  return out;
}

interface VisitHead {
  source: string;
  mjd: number;
  mjdFirst: number;
  mjdLast: number;
  n: number;
  nFreqs: number;
  fmin: number;
  fmax: number;
  dmKind: 'absolute' | 'offset';
}

interface FitPart {
  dm: number;
  dmErr: number;
  dmErrScaled: number;
  offsetUs: number | null;
  chi2: number;
  dof: number;
  reducedChi2: number | null;
  chi2P: number | null;
}

/** The visit record, built in one literal (one shape for fitted and unconstrained visits). */
function visitRecord(
  h: VisitHead,
  f: FitPart | undefined,
  flagged: number[],
  warnings: string[],
  model: string,
): VisitFit {
  return {
    source: h.source,
    mjd: h.mjd,
    mjd_first: h.mjdFirst,
    mjd_last: h.mjdLast,
    n_toas: h.n,
    n_freqs: h.nFreqs,
    freq_min_mhz: h.fmin,
    freq_max_mhz: h.fmax,
    status: f ? 'fitted' : 'unconstrained',
    dm: f ? f.dm : null,
    dm_err: f ? f.dmErr : null,
    dm_err_scaled: f ? f.dmErrScaled : null,
    dm_kind: h.dmKind,
    offset_us: f ? f.offsetUs : null,
    chi2: f ? f.chi2 : null,
    dof: f ? f.dof : null,
    reduced_chi2: f ? f.reducedChi2 : null,
    chi2_p_value: f ? f.chi2P : null,
    flagged_rows: flagged,
    warnings,
    model,
  };
}

let distinctScratch = new Float64Array(64);

interface Scratch {
  y: Float64Array;
  sigma: Float64Array;
  ya: Float64Array;
  sa: Float64Array;
  x: Float64Array;
  residuals: Float64Array;
  /** positions (in the visit) of the arrival times still fitted */
  activeIdx: Uint32Array;
}
let scratch: Scratch | undefined;

/** Work buffers reused from visit to visit (fits run one at a time), grown when needed. */
function scratchFor(n: number): Scratch {
  if (!scratch || scratch.y.length < n) {
    const size = Math.max(64, n * 2);
    scratch = {
      y: new Float64Array(size),
      sigma: new Float64Array(size),
      ya: new Float64Array(size),
      sa: new Float64Array(size),
      x: new Float64Array(size),
      residuals: new Float64Array(size),
      activeIdx: new Uint32Array(size),
    };
  }
  return scratch;
}

/**
 * Number of distinct frequencies among the active rows (sorted scratch copy, no Set). Visits
 * are small: up to 32 rows an insertion sort in place, beyond that the typed array's own sort.
 * (Frequencies are validated positive numbers, so `<` orders them as that sort does.)
 */
function countDistinctFrequencies(
  table: ToaTable,
  rows: ArrayLike<number>,
  active: Uint8Array,
): number {
  if (distinctScratch.length < rows.length) distinctScratch = new Float64Array(rows.length * 2);
  const f = distinctScratch;
  let m = 0;
  for (let j = 0; j < rows.length; j++) if (active[j]) f[m++] = table.freqMhz(rows[j]);
  if (m > 32) f.subarray(0, m).sort();
  else {
    for (let j = 1; j < m; j++) {
      const v = f[j];
      let k = j - 1;
      while (k >= 0 && f[k] > v) {
        f[k + 1] = f[k];
        k--;
      }
      f[k + 1] = v;
    }
  }
  let count = m > 0 ? 1 : 0;
  for (let j = 1; j < m; j++) if (f[j] !== f[j - 1]) count++;
  return count;
}

/** The receivers of the active rows, by id; NO_RECEIVERS for a table without a receiver column. */
function receiverNames(table: ToaTable, rows: ArrayLike<number>, active: Uint8Array): string[] {
  if (!table.header.hasReceiver) return NO_RECEIVERS;
  const ids = new Set<number>();
  for (let j = 0; j < rows.length; j++) if (active[j]) ids.add(table.receiverId(rows[j]));
  return [...ids].sort((a, b) => a - b).map((id) => table.receivers[id]);
}

/** The chromatic fit of a visit on its (unclipped) rows; replaces the DM and fit quality. */
function applyChromatic(
  out: VisitFit,
  table: ToaTable,
  rows: ArrayLike<number>,
  active: Uint8Array,
  receivers: string[],
  y: Float64Array,
  sigma: Float64Array,
  opts: DmFitOptions,
): number[] | undefined {
  const k = opts.constant.value;
  const idx: number[] = [];
  for (let j = 0; j < rows.length; j++) if (active[j]) idx.push(j);
  const m = idx.length;
  const nOff = receivers.length;
  const p0 = nOff + 1 + opts.evolution;
  const design = new Float64Array(m * p0);
  const freq = new Float64Array(m);
  const ya = new Float64Array(m);
  const sa = new Float64Array(m);
  idx.forEach((j, r) => {
    const i = rows[j];
    const f = table.freqMhz(i);
    freq[r] = f;
    ya[r] = y[j];
    sa[r] = sigma[j];
    const off = table.header.hasReceiver
      ? receivers.indexOf(table.receivers[table.receiverId(i)])
      : 0;
    design[r * p0 + off] = 1;
    design[r * p0 + nOff] = (k * 1e6) / (f * f);
    const l = Math.log10(f / 1000);
    for (let e = 1; e <= opts.evolution; e++) design[r * p0 + nOff + e] = l ** e;
  });
  const refMhz = opts.refFreqMhz ?? 1000;
  try {
    const c = chromaticFit(
      { design, p0, dmColumn: nOff, freqMhz: freq, y: ya, sigma: sa, m },
      opts.scatter as 'fixed' | 'free',
      refMhz,
      opts.alpha ?? KOLMOGOROV_ALPHA,
    );
    const ch = c.chosen;
    const red = ch.dof > 0 ? ch.chi2 / ch.dof : null;
    out.dm = ch.dm;
    out.dm_err = ch.dmErr;
    out.dm_err_scaled = red !== null && red > 1 ? ch.dmErr * Math.sqrt(red) : ch.dmErr;
    out.offset_us = ch.offsets[0];
    out.chi2 = ch.chi2;
    out.dof = ch.dof;
    out.reduced_chi2 = red;
    out.chi2_p_value = ch.dof > 0 ? chi2Sf(ch.chi2, ch.dof) : null;
    out.tau_ref_us = ch.tauRefUs;
    out.tau_ref_err_us = ch.tauRefErrUs;
    out.alpha = ch.alpha;
    out.alpha_err = ch.alphaErr;
    out.ref_freq_mhz = refMhz;
    out.dm_tau_cov = ch.dmTauCov;
    out.dm_tau_corr = ch.dmTauCov / (ch.dmErr * ch.tauRefErrUs);
    out.models = c.models;
    out.preferred = c.preferred;
    out.model += ` + S·(ν/${refMhz} MHz)^−α, α ${opts.scatter === 'free' ? 'fitted' : `= ${ch.alpha}`}`;
    out.warnings.push(...c.warnings);
    if (Math.abs(out.dm_tau_corr) > 0.95) {
      out.warnings.push(
        `DM and the scattering term are strongly correlated (r = ${out.dm_tau_corr.toFixed(3)}): a wider band would separate them`,
      );
    }
    return ch.params;
  } catch (e) {
    if (!(e instanceof SingularDesignError)) throw e;
    out.warnings.push(
      `too few arrival times (${m}) for a chromatic fit with ${p0 + 1} parameters: DM-only result kept`,
    );
    return undefined;
  }
}

function flaggedRows(table: ToaTable, rows: ArrayLike<number>, active: Uint8Array): number[] {
  const out: number[] = [];
  for (let j = 0; j < rows.length; j++) if (!active[j]) out.push(table.row(rows[j]));
  return out.length > 1 ? out.sort((a, b) => a - b) : out;
}

/** Round to a decimal step such as 1e-7 without binary noise in the printed value. */
function round(v: number, step: number, how: (x: number) => number = Math.round): number {
  // an integer divided by an exact power of ten is the double nearest the decimal, so it prints
  // without binary noise
  const inv = Math.round(1 / step);
  return how(v * inv) / inv;
}
