import { RealFft } from '../dsp/fft.js';
import { noiseFromDifferences } from '../profiles/estimate.js';
import type { ProfileSet } from '../profiles/types.js';

/**
 * A profile cube: one visit's pulse profiles in many frequency channels, folded at the pulse
 * period and already aligned (dedispersed) with `dmApplied` (0: raw). Phase 0 of every channel
 * is the epoch `mjd` at `refFreqMhz` (null: infinite frequency); bin j holds phase j/nbin.
 */
export interface Cube {
  source: string;
  mjd: string;
  periodS: number;
  dmApplied: number;
  refFreqMhz: number | null;
  /** receiver/backend label from the file, if any */
  receiver: string | null;
  nchan: number;
  nbin: number;
  freqs: Float64Array;
  /** nchan × nbin, row-major */
  data: Float64Array;
  /** per-bin noise σ given by the file for each channel (NaN: not given, estimated) */
  noise: Float64Array;
  /** 1 where the file flagged the channel (entirely NaN or constant) */
  flagged: Uint8Array;
}

/** A cube from a checked ProfileSet (read with flagged channels allowed). */
export function cubeFromProfiles(set: ProfileSet): Cube {
  const nchan = set.bands.length;
  const nbin = set.bands[0].bins.length;
  const data = new Float64Array(nchan * nbin);
  const freqs = new Float64Array(nchan);
  const noise = new Float64Array(nchan).fill(NaN);
  const flagged = new Uint8Array(nchan);
  set.bands.forEach((b, c) => {
    data.set(b.bins, c * nbin);
    freqs[c] = b.freqMhz;
    if (b.noise !== undefined) noise[c] = b.noise;
  });
  for (const c of set.flagged ?? []) flagged[c] = 1;
  return {
    source: set.source,
    mjd: set.mjd,
    periodS: set.periodS,
    dmApplied: set.dm ?? 0,
    refFreqMhz: set.refFreqMhz ?? null,
    receiver: set.receiver ?? null,
    nchan,
    nbin,
    freqs,
    data,
    noise,
    flagged,
  };
}

/**
 * The harmonics used for matching: k = 1 … H with H = ⌊(nbin − 1)/2⌋. The zero harmonic (the
 * baseline) is dropped, and so is the Nyquist harmonic of an even nbin, which a fractional
 * shift cannot move (it is real).
 */
export function harmonicCount(nbin: number): number {
  return Math.floor((nbin - 1) / 2);
}

/**
 * Fourier harmonics 1 … H of many rows (channels) of nbin bins: row r, harmonic k at
 * index r·H + (k − 1). `power[r]` = Σ_k |X_rk|².
 */
export interface Harmonics {
  rows: number;
  nbin: number;
  h: number;
  re: Float64Array;
  im: Float64Array;
  power: Float64Array;
}

export function harmonicsOf(data: Float64Array, rows: number, nbin: number): Harmonics {
  const h = harmonicCount(nbin);
  const fft = new RealFft(nbin);
  const fr = new Float64Array(fft.size);
  const fi = new Float64Array(fft.size);
  const re = new Float64Array(rows * h);
  const im = new Float64Array(rows * h);
  const power = new Float64Array(rows);
  for (let r = 0; r < rows; r++) {
    fft.forward(data.subarray(r * nbin, (r + 1) * nbin), fr, fi);
    let p = 0;
    for (let k = 1; k <= h; k++) {
      re[r * h + k - 1] = fr[k];
      im[r * h + k - 1] = fi[k];
      p += fr[k] * fr[k] + fi[k] * fi[k];
    }
    power[r] = p;
  }
  return { rows, nbin, h, re, im, power };
}

/**
 * Harmonics of one row resampled to another number of bins, band-limited (exact for a
 * profile with no power above the smaller Nyquist frequency): harmonics above the target's H
 * are dropped, missing ones are zero, and amplitudes scale by nbinTo/nbinFrom so the profile
 * keeps its height.
 */
export function resampleHarmonics(src: Harmonics, nbinTo: number): Harmonics {
  const h = harmonicCount(nbinTo);
  const scale = nbinTo / src.nbin;
  const re = new Float64Array(src.rows * h);
  const im = new Float64Array(src.rows * h);
  const power = new Float64Array(src.rows);
  const keep = Math.min(h, src.h);
  for (let r = 0; r < src.rows; r++) {
    let p = 0;
    for (let k = 0; k < keep; k++) {
      const a = src.re[r * src.h + k] * scale;
      const b = src.im[r * src.h + k] * scale;
      re[r * h + k] = a;
      im[r * h + k] = b;
      p += a * a + b * b;
    }
    power[r] = p;
  }
  return { rows: src.rows, nbin: nbinTo, h, re, im, power };
}

/**
 * Per-bin noise σ of each channel: the file's value, else estimated from differences of
 * neighbouring bins (robust to the pulse; see profiles/estimate.ts). Flagged channels get NaN.
 */
export function channelNoise(cube: Cube): Float64Array {
  const out = new Float64Array(cube.nchan);
  for (let c = 0; c < cube.nchan; c++) {
    if (cube.flagged[c]) out[c] = NaN;
    else if (Number.isFinite(cube.noise[c])) out[c] = cube.noise[c];
    else
      out[c] = noiseFromDifferences(cube.data.subarray(c * cube.nbin, (c + 1) * cube.nbin)) || NaN;
  }
  return out;
}

/** Wrap a phase (turns) into [−0.5, 0.5). */
export function wrapPhase(x: number): number {
  return x - Math.floor(x + 0.5);
}
