import { RealFft } from '../dsp/fft.js';
import { waveletDenoise, waveletLevels } from '../dsp/wavelet.js';
import { InputError } from '../formats/errors.js';
import { offPulseLevel } from '../profiles/estimate.js';
import { formatMjd, parseMjd, toMjdNumber } from '../time/mjd.js';
import {
  channelNoise,
  harmonicCount,
  harmonicsOf,
  resampleHarmonics,
  type Cube,
  type Harmonics,
} from './cube.js';
import { matchProfile, PeakFinder } from './match.js';

export type SmoothMethod = 'fourier' | 'wavelet' | 'none';
export const SMOOTH_METHODS: SmoothMethod[] = ['fourier', 'wavelet', 'none'];

/** Where a built template puts its peak, and so the phase its arrival times mark. */
export const TEMPLATE_PEAK_PHASE = 0.5;

/** A problem with one of the cubes given to template build (index into the list). */
export class CubeSetError extends InputError {
  constructor(
    reason: string,
    readonly cubeIndex: number,
  ) {
    super(reason, {});
  }
}

export interface TemplateVisit {
  mjd: string;
  /** S/N of the visit's band-averaged profile against the final template */
  snr: number;
  /** share of the average (inverse-variance weight, normalised) */
  weight: number;
  used: boolean;
  note?: string;
}

export interface BuiltTemplate {
  source: string;
  mjd: string;
  periodS: number;
  dm: number;
  refFreqMhz: number | null;
  nbin: number;
  /** the S/N-weighted mean frequency of the channels averaged */
  freqMhz: number;
  /** peak 1 at phase TEMPLATE_PEAK_PHASE, off-pulse level 0 */
  bins: Float64Array;
  fiducialPhase: number;
  smooth: SmoothMethod;
  /** harmonics kept by the Fourier low-pass (fourier smoothing) */
  harmonicsKept: number | null;
  /** per-bin noise σ of the average before smoothing, in the template's units */
  noise: number;
  visits: TemplateVisit[];
  warnings: string[];
}

/** Fewest visits whose profile S/N is this high are averaged; weaker ones are left out. */
const MIN_VISIT_SNR = 3;

/** One visit's band-averaged profile and what template building needs of its cube. */
export interface VisitProfile {
  source: string;
  mjd: string;
  periodS: number;
  dmApplied: number;
  refFreqMhz: number | null;
  nbin: number;
  bins: Float64Array;
  /** per-bin noise σ of the average */
  sigma: number;
  /** the weighted mean frequency of the channels averaged */
  freq: number;
}

/**
 * A cube's channels averaged with inverse-variance weights at the cube's own dedispersion, so
 * a pipeline can read one cube at a time and keep only this (cubes can be large).
 */
export function scrunchCube(cube: Cube): VisitProfile {
  const sigma = channelNoise(cube);
  const n = cube.nbin;
  const bins = new Float64Array(n);
  let sw = 0;
  let sf = 0;
  for (let c = 0; c < cube.nchan; c++) {
    const s = sigma[c];
    if (!(s > 0)) continue;
    const w = 1 / (s * s);
    sw += w;
    sf += w * cube.freqs[c];
    const row = cube.data.subarray(c * n, (c + 1) * n);
    for (let j = 0; j < n; j++) bins[j] += w * row[j];
  }
  for (let j = 0; j < n; j++) bins[j] /= sw;
  return {
    source: cube.source,
    mjd: cube.mjd,
    periodS: cube.periodS,
    dmApplied: cube.dmApplied,
    refFreqMhz: cube.refFreqMhz,
    nbin: n,
    bins,
    sigma: 1 / Math.sqrt(sw),
    freq: sf / sw,
  };
}

/**
 * Fourier low-pass with a Wiener gain (Wiener 1949): with N the noise power per harmonic and
 * P̄_k a five-harmonic running mean of |T_k|², harmonic k keeps max(0, 1 − N/P̄_k) up to the
 * last harmonic before P̄ stays under 2N for eight harmonics in a row; the rest are dropped.
 */
function wienerLowPass(re: Float64Array, im: Float64Array, h: number, noisePower: number): number {
  const p = new Float64Array(h + 1);
  for (let k = 1; k <= h; k++) p[k] = re[k] * re[k] + im[k] * im[k];
  const mean = new Float64Array(h + 1);
  for (let k = 1; k <= h; k++) {
    let s = 0;
    let n = 0;
    for (let j = Math.max(1, k - 2); j <= Math.min(h, k + 2); j++) {
      s += p[j];
      n++;
    }
    mean[k] = s / n;
  }
  let cut = 0;
  let quiet = 0;
  for (let k = 1; k <= h; k++) {
    if (mean[k] > 2 * noisePower) {
      cut = k;
      quiet = 0;
    } else if (++quiet >= 8) break;
  }
  for (let k = 1; k <= h; k++) {
    const g = k <= cut ? Math.max(0, 1 - noisePower / mean[k]) : 0;
    re[k] *= g;
    im[k] *= g;
  }
  return cut;
}

/**
 * A smooth template from many visits of one pulsar: each cube's channels are averaged (noise
 * weighted) into one profile (scrunchCube); the profiles are aligned to the current template by Fourier
 * template matching, scaled to unit amplitude and averaged with inverse-variance weights
 * (b/s)²; three passes, each against the smoothed result of the last. The average is smoothed
 * (Fourier low-pass, wavelet, or not at all), its off-pulse level set to 0, its peak to 1 and
 * moved to phase ½, which becomes the template's fiducial phase (its arrival times mark the
 * peak).
 */
export function buildTemplate(
  cubes: VisitProfile[],
  opts: { smooth: SmoothMethod; iterations?: number },
): BuiltTemplate {
  if (cubes.length === 0) throw new RangeError('no cubes');
  const first = cubes[0];
  const warnings: string[] = [];
  cubes.forEach((c, i) => {
    if (c.source !== first.source)
      throw new CubeSetError(
        `this cube is of ${c.source} but the first is of ${first.source}: a template is built from one pulsar`,
        i,
      );
    if (Math.abs(c.periodS - first.periodS) > 1e-3 * first.periodS)
      throw new CubeSetError(
        `this cube's period (${c.periodS} s) differs from the first's (${first.periodS} s) by more than 0.1%`,
        i,
      );
  });
  const n = first.nbin;
  const h = harmonicCount(n);
  if (opts.smooth === 'wavelet' && waveletLevels(n) === 0) {
    throw new CubeSetError(
      `wavelet smoothing needs an even number of bins ≥ 8 (these cubes have ${n}); use --smooth fourier`,
      0,
    );
  }

  // band-averaged profile and harmonics of every visit, resampled to the first cube's bins
  const profiles = cubes;
  const re = new Float64Array(cubes.length * h);
  const im = new Float64Array(cubes.length * h);
  const power = new Float64Array(cubes.length);
  const s2 = new Float64Array(cubes.length);
  const resampled = new Set<number>();
  profiles.forEach((p, v) => {
    let harm: Harmonics = harmonicsOf(p.bins, 1, cubes[v].nbin);
    if (cubes[v].nbin !== n) {
      harm = resampleHarmonics(harm, n);
      resampled.add(v);
    }
    re.set(harm.re, v * h);
    im.set(harm.im, v * h);
    power[v] = harm.power[0];
    const scaleBins = n / cubes[v].nbin;
    // white noise of σ per bin: s² = nbin·σ²/2 (in the resampled units)
    s2[v] = (cubes[v].nbin * p.sigma * p.sigma * scaleBins * scaleBins) / 2;
  });
  if (resampled.size)
    warnings.push(
      `${resampled.size} cube(s) had another number of bins and were resampled to ${n} in the Fourier domain`,
    );

  // start from the visit with the most signal power above its noise
  let start = 0;
  let startSnr = -Infinity;
  for (let v = 0; v < cubes.length; v++) {
    const snr = Math.sqrt(Math.max(power[v] - 2 * h * s2[v], 0) / s2[v]);
    if (snr > startSnr) {
      startSnr = snr;
      start = v;
    }
  }
  const tre = new Float64Array(h);
  const tim = new Float64Array(h);
  tre.set(re.subarray(start * h, (start + 1) * h));
  tim.set(im.subarray(start * h, (start + 1) * h));

  const finder = new PeakFinder(n, h);
  const zre = new Float64Array(h);
  const zim = new Float64Array(h);
  // full half-spectra (k = 0 … ⌊n/2⌋) so they can go straight to the inverse FFT
  const are = new Float64Array((n >> 1) + 1);
  const aim = new Float64Array((n >> 1) + 1);
  let visits: TemplateVisit[] = [];
  let noiseVar = NaN;
  let kept: number | null = null;
  const passes = opts.iterations ?? 3;
  for (let pass = 0; pass < passes; pass++) {
    let tpow = 0;
    for (let k = 0; k < h; k++) tpow += tre[k] * tre[k] + tim[k] * tim[k];
    are.fill(0);
    aim.fill(0);
    let su = 0;
    visits = [];
    const weights: number[] = [];
    for (let v = 0; v < cubes.length; v++) {
      const m = matchProfile(re, im, v * h, power[v], tre, tim, 0, tpow, finder, zre, zim, s2[v]);
      const used = m.amp > 0 && m.snr >= MIN_VISIT_SNR;
      visits.push({
        mjd: cubes[v].mjd,
        snr: m.snr,
        weight: 0,
        used,
        ...(used ? {} : { note: `S/N ${m.snr.toFixed(1)} below ${MIN_VISIT_SNR}: left out` }),
      });
      weights.push(0);
      if (!used) continue;
      // aligned (advanced by φ) and scaled to unit amplitude: variance s²/b² per part
      const u = (m.amp * m.amp) / s2[v];
      weights[v] = u;
      su += u;
      const w = 2 * Math.PI * m.phase;
      for (let k = 1; k <= h; k++) {
        const cr = Math.cos(w * k);
        const ci = Math.sin(w * k);
        const a = re[v * h + k - 1];
        const b = im[v * h + k - 1];
        are[k] += (u * (a * cr - b * ci)) / m.amp;
        aim[k] += (u * (a * ci + b * cr)) / m.amp;
      }
    }
    if (!(su > 0)) {
      throw new CubeSetError(
        `no visit has a pulse with S/N ≥ ${MIN_VISIT_SNR} against the starting profile: nothing to average`,
        start,
      );
    }
    for (let k = 1; k <= h; k++) {
      are[k] /= su;
      aim[k] /= su;
    }
    visits.forEach((vv, v) => (vv.weight = weights[v] / su));
    noiseVar = 1 / su; // s² of the average's harmonic parts, in units of unit amplitude
    if (opts.smooth === 'fourier') kept = wienerLowPass(are, aim, h, 2 * noiseVar);
    for (let k = 1; k <= h; k++) {
      tre[k - 1] = are[k];
      tim[k - 1] = aim[k];
    }
    if (opts.smooth === 'wavelet') {
      const fft = new RealFft(n);
      const bins = new Float64Array(n);
      fft.inverse(are, aim, bins);
      const sigmaBin = Math.sqrt((2 * noiseVar) / n);
      const smooth = waveletDenoise(bins, sigmaBin);
      const fr = new Float64Array(fft.size);
      const fi = new Float64Array(fft.size);
      fft.forward(smooth, fr, fi);
      for (let k = 1; k <= h; k++) {
        tre[k - 1] = fr[k];
        tim[k - 1] = fi[k];
      }
    }
  }

  // peak to phase ½, then bins with off-pulse level 0 and peak 1
  const peak = finder.find(tre, tim, 0);
  const shift = TEMPLATE_PEAK_PHASE - peak.phase;
  const fre = new Float64Array((n >> 1) + 1);
  const fim = new Float64Array(fre.length);
  for (let k = 1; k <= h; k++) {
    const cr = Math.cos(-2 * Math.PI * k * shift);
    const ci = Math.sin(-2 * Math.PI * k * shift);
    fre[k] = tre[k - 1] * cr - tim[k - 1] * ci;
    fim[k] = tre[k - 1] * ci + tim[k - 1] * cr;
  }
  const fft = new RealFft(n);
  const bins = new Float64Array(n);
  fft.inverse(fre, fim, bins);
  const level = offPulseLevel(bins);
  let max = -Infinity;
  for (let j = 0; j < n; j++) {
    bins[j] -= level;
    if (bins[j] > max) max = bins[j];
  }
  for (let j = 0; j < n; j++) bins[j] /= max;
  const noise = Math.sqrt((2 * noiseVar) / n) / max;

  const usedVisits = visits.filter((v) => v.used).length;
  if (usedVisits === 1)
    warnings.push(
      'built from a single visit: its noise is in the template, which pulls arrival times from that visit towards zero shift',
    );
  if (visits.length - usedVisits > 0)
    warnings.push(`${visits.length - usedVisits} visit(s) too faint to use were left out`);

  // the mean epoch of the visits used, and the weighted mean frequency
  const mjds = cubes.filter((_, v) => visits[v].used).map((c) => toMjdNumber(parseMjd(c.mjd)));
  const meanMjd = mjds.reduce((s, m) => s + m, 0) / mjds.length;
  const day = Math.floor(meanMjd);
  const secs = (meanMjd - day) * 86400;
  let sf = 0;
  let sw = 0;
  visits.forEach((v, i) => {
    sf += v.weight * profiles[i].freq;
    sw += v.weight;
  });
  return {
    source: first.source,
    mjd: formatMjd({ day, sec: Math.floor(secs), frac: secs - Math.floor(secs) }, 6),
    periodS: first.periodS,
    dm: first.dmApplied,
    refFreqMhz: first.refFreqMhz,
    nbin: n,
    freqMhz: sf / sw,
    bins,
    fiducialPhase: TEMPLATE_PEAK_PHASE,
    smooth: opts.smooth,
    harmonicsKept: kept,
    noise,
    visits,
    warnings,
  };
}
