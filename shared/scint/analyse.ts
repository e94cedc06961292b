import { acfAt, fitCut, maskedAcf, type CutFit } from './acf.js';
import type { DynSpec } from './dynspec.js';
import { flagRfi, interpolateFlagged, type FlaggedChannel } from './rfi.js';
import { fitArc, secondarySpectrum, type ArcFit } from './secondary.js';

/** C₁ for a uniform Kolmogorov medium (Cordes & Rickett 1998, from memory). */
export const C1_KOLMOGOROV_UNIFORM = 1.16;
/** Filling factor of the finite-scintle count (Cordes 1986, from memory; 0.1–0.3 quoted). */
export const SCINTLE_ETA = 0.2;
/**
 * The finite-scintle fraction N_s^−½ suits the frequency width (the scatter of Δν_d over
 * injections matches it); the Gaussian time cut is steeper at its defining point (logarithmic
 * slope 2 at 1/e, against the Lorentzian's 1 at half maximum), and Δt_d scatters by about 2/3
 * of N_s^−½: measured by injection–recovery over 240 simulated spectra (Δν_d 4–12 channels,
 * Δt_d 6–18 sub-integrations), between the ½ that propagating one point of the cut gives and 1.
 * The calibration suite checks both on other seeds and ranges.
 */
export const TIME_WIDTH_SCINTLE_FACTOR = 2 / 3;

/** An arc must stand this far above the typical trial parabola (mean power, dB). */
export const ARC_MIN_CONTRAST_DB = 1;

/** Above this flagged fraction a warning says the statistics rest on little data. */
const FLAGGED_WARN = 0.3;

/** τ_d = C₁/(2π Δν_d) in µs for Δν_d in MHz (science.md; Δν_d = 1 MHz, C₁ = 1.16 → 0.18462 µs). */
export function tauFromBandwidthUs(dnuDMhz: number, c1: number): number {
  return c1 / (2 * Math.PI * dnuDMhz);
}

/** N_s ≈ (1 + η B/Δν_d)(1 + η T/Δt_d) (Cordes 1986, from memory). */
export function scintleCount(bMhz: number, tS: number, dnuD: number, dtD: number): number {
  return (1 + (SCINTLE_ETA * bMhz) / dnuD) * (1 + (SCINTLE_ETA * tS) / dtD);
}

export interface ScintOptions {
  fence: number;
  pixelSigma: number;
  c1: number;
  startMask?: number[];
}

export interface ScintAnalysis {
  rfi: {
    flaggedFraction: number;
    channels: FlaggedChannel[];
    subints: number[];
    pixels: number;
    snrCostFraction: number;
  };
  freqCut: CutFit;
  timeCut: CutFit;
  dnuD: number | null;
  dnuDErr: number | null;
  dtD: number | null;
  dtDErr: number | null;
  nScintles: number | null;
  tauUs: number | null;
  tauErrUs: number | null;
  status: 'measured' | 'unresolved' | 'failed';
  dnuDUpper: number | null;
  tauLowerUs: number | null;
  arc: ArcFit | null;
  /** the pictures' data */
  mask: Uint8Array;
  filled: Float64Array;
  acfPatch: { values: Float64Array; halfChans: number; halfSubs: number };
  secondary: ReturnType<typeof secondarySpectrum>;
  warnings: string[];
}

/**
 * The whole analysis of one dynamic spectrum: interference flags, the mask-aware ACF, the
 * decorrelation bandwidth (HWHM of the frequency cut) and scintillation time (1/e of the time
 * cut), each with an error combining the fit's and the finite-scintle fraction N_s^−½, τ from
 * the bandwidth, and the secondary spectrum with its arc curvature.
 */
/** Channels and sub-integrations needed with unflagged pixels before anything is claimed. */
const MIN_USABLE = 3;

/** How many channels, and how many sub-integrations, keep at least one unflagged pixel. */
function unflaggedExtent(
  mask: ArrayLike<number | boolean>,
  nchan: number,
  nsub: number,
): { channels: number; subints: number } {
  const subUsed = new Uint8Array(nsub);
  let channels = 0;
  for (let c = 0; c < nchan; c++) {
    let any = false;
    for (let t = 0; t < nsub; t++)
      if (!mask[c * nsub + t]) {
        any = true;
        subUsed[t] = 1;
      }
    if (any) channels++;
  }
  return { channels, subints: subUsed.reduce((a, b) => a + b, 0) };
}

/**
 * Intensities are in any unit, but their squares must stay within doubles: a spectrum whose
 * largest |value| lies outside [2⁻²⁰⁰, 2²⁰⁰] (≈ 6e-61 … 1.6e60) is analysed scaled by a power of
 * two (exact) that brings it near 1; everything measured is a width, a ratio or a position, so
 * only the pictures' intensities and powers are scaled back.
 */
function unitScale(data: Float64Array): number {
  let max = 0;
  for (let i = 0; i < data.length; i++) {
    const a = Math.abs(data[i]);
    if (a > max) max = a; // flagged (NaN) pixels hold 0 in ds.data
  }
  if (max === 0 || (max >= 2 ** -200 && max <= 2 ** 200)) return 1;
  return 2 ** -Math.round(Math.log2(max));
}

export function analyseDynspec(input: DynSpec, opts: ScintOptions): ScintAnalysis {
  const scale = unitScale(input.data);
  const ds: DynSpec = scale === 1 ? input : { ...input, data: input.data.map((v) => v * scale) };
  const warnings: string[] = [];
  const rfi = flagRfi(ds, {
    fence: opts.fence,
    pixelSigma: opts.pixelSigma,
    startMask: opts.startMask,
  });
  if (rfi.flaggedFraction > FLAGGED_WARN)
    warnings.push(
      `${(100 * rfi.flaggedFraction).toFixed(1)}% of the pixels are flagged: the statistics rest on little data (S/N cost ${(100 * rfi.snrCostFraction).toFixed(1)}%)`,
    );
  const acf = maskedAcf(ds, rfi.mask);
  const freqCut = fitCut(acf, 'freq', ds.dfMhz);
  const timeCut = fitCut(acf, 'time', ds.dtS);
  const bandMhz = ds.nchan * ds.dfMhz;
  const spanS = ds.nsub * ds.dtS;
  let dnuD: number | null = null;
  let dnuDErr: number | null = null;
  let dtD: number | null = null;
  let dtDErr: number | null = null;
  let nScintles: number | null = null;
  // a frequency cut with no significant scintle structure, or narrower than a channel, is no
  // measurement: the fitted amplitude must stand 3σ above the scatter of the cut about the fit
  if (freqCut.ok) {
    const resid = freqCut.acf.map((v, i) => v - freqCut.model[i]);
    const rms = Math.sqrt(resid.reduce((s, v) => s + v * v, 0) / Math.max(1, resid.length - 3));
    if (!(freqCut.amplitude > 3 * rms) || freqCut.width < ds.dfMhz) freqCut.ok = false;
  }
  if (freqCut.ok && timeCut.ok) {
    dnuD = freqCut.width;
    dtD = timeCut.width;
    nScintles = scintleCount(bandMhz, spanS, dnuD, dtD);
    const frac = 1 / Math.sqrt(nScintles);
    dnuDErr = Math.hypot(freqCut.widthErr, frac * dnuD);
    dtDErr = Math.hypot(timeCut.widthErr, TIME_WIDTH_SCINTLE_FACTOR * frac * dtD);
    if (dnuD < ds.dfMhz)
      warnings.push(
        `Δν_d (${dnuD.toPrecision(3)} MHz) is narrower than a channel (${ds.dfMhz.toPrecision(3)} MHz): scintles are unresolved in frequency`,
      );
    if (dtD < ds.dtS)
      warnings.push(
        `Δt_d (${dtD.toPrecision(3)} s) is shorter than a sub-integration (${ds.dtS.toPrecision(3)} s): scintles are unresolved in time`,
      );
    if (dnuD > bandMhz / 3)
      warnings.push('Δν_d is more than a third of the band: few scintles, a poorly measured width');
    if (dtD > spanS / 3)
      warnings.push(
        'Δt_d is more than a third of the observation: few scintles, a poorly measured width',
      );
  } else {
    if (!freqCut.ok) warnings.push('the frequency cut of the ACF shows no measurable scintles');
    if (!timeCut.ok) warnings.push('the time cut of the ACF could not be fitted');
  }
  // no significant structure across channels (or narrower than one): the scintles are
  // narrower than a channel, or washed out, so only limits can be given
  const unresolved = !freqCut.ok;
  let status: ScintAnalysis['status'] = dnuD !== null ? 'measured' : 'failed';
  let dnuDUpper: number | null = null;
  let tauLowerUs: number | null = null;
  // a limit needs data: with unflagged pixels in fewer than three channels or sub-integrations
  // there is no structure to resolve or miss, so no limit either
  const { channels: usableChannels, subints: usableSubints } = unflaggedExtent(
    rfi.mask,
    ds.nchan,
    ds.nsub,
  );
  const tooLittle = usableChannels < MIN_USABLE || usableSubints < MIN_USABLE;
  if (tooLittle) {
    status = 'failed';
    dnuD = dnuDErr = dtD = dtDErr = nScintles = null;
    warnings.push(
      `only ${usableChannels} channel(s) and ${usableSubints} sub-integration(s) hold unflagged pixels (at least ${MIN_USABLE} of each are needed): nothing to correlate, no measurement and no limit`,
    );
  } else if (dnuD === null && unresolved) {
    status = 'unresolved';
    dnuDUpper = ds.dfMhz;
    tauLowerUs = tauFromBandwidthUs(ds.dfMhz, opts.c1);
    warnings.push(
      `no scintle structure resolved across channels: Δν_d is below the channel width (${ds.dfMhz.toPrecision(3)} MHz) or the scintles are washed out, so τ > ${tauLowerUs.toPrecision(3)} µs`,
    );
  }
  const tauUs = dnuD === null ? null : tauFromBandwidthUs(dnuD, opts.c1);
  const tauErrUs = tauUs === null || dnuDErr === null ? null : (tauUs * dnuDErr) / dnuD!;

  const filledScaled = interpolateFlagged(ds, rfi.mask);
  const secondary = secondarySpectrum(filledScaled, ds.nchan, ds.nsub, ds.dfMhz, ds.dtS);
  let arc = fitArc(secondary);
  // the pictures in the input's units: intensity ÷ scale, power (dB) − 20 log₁₀ scale
  const filled = scale === 1 ? filledScaled : filledScaled.map((v) => v / scale);
  if (scale !== 1) {
    const shift = 20 * Math.log10(scale);
    for (let i = 0; i < secondary.db.length; i++) secondary.db[i] -= shift;
  }
  if (arc && arc.contrastDb < ARC_MIN_CONTRAST_DB) {
    warnings.push(
      `no clear arc: the best parabola is only ${arc.contrastDb.toFixed(2)} dB above the typical one (at least ${ARC_MIN_CONTRAST_DB} dB needed)`,
    );
    arc = null;
  } else if (!arc) warnings.push('no arc: the mean power along trial parabolas has no maximum');
  else
    warnings.push(
      'the arc curvature is provisional: trial parabolas recover η of simulated screens with a clear arc, but also find a best parabola in spectra without one; judge it on the secondary-spectrum picture',
    );

  // the central part of the ACF for the picture: ±4 widths, at most the whole
  const halfChans = Math.min(
    ds.nchan - 1,
    Math.max(8, Math.ceil((4 * (dnuD ?? ds.dfMhz * 4)) / ds.dfMhz)),
  );
  const halfSubs = Math.min(
    ds.nsub - 1,
    Math.max(8, Math.ceil((4 * (dtD ?? ds.dtS * 4)) / ds.dtS)),
  );
  const patch = new Float64Array((2 * halfChans + 1) * (2 * halfSubs + 1));
  for (let dc = -halfChans; dc <= halfChans; dc++)
    for (let dt = -halfSubs; dt <= halfSubs; dt++)
      patch[(dc + halfChans) * (2 * halfSubs + 1) + dt + halfSubs] = acfAt(acf, dc, dt);

  return {
    rfi: {
      flaggedFraction: rfi.flaggedFraction,
      channels: rfi.channels,
      subints: rfi.subints,
      pixels: rfi.pixels,
      snrCostFraction: rfi.snrCostFraction,
    },
    freqCut,
    timeCut,
    dnuD,
    dnuDErr,
    dtD,
    dtDErr,
    nScintles,
    tauUs,
    tauErrUs,
    status,
    dnuDUpper,
    tauLowerUs,
    arc,
    mask: rfi.mask,
    filled,
    acfPatch: { values: patch, halfChans, halfSubs },
    secondary,
    warnings,
  };
}
