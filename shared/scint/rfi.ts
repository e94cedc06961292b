/** Median of numbers through a typed-array sort (numeric, and far quicker than Array#sort). */
function median(values: ArrayLike<number>): number {
  const s = Float64Array.from(values).sort();
  const n = s.length;
  if (n === 0) return NaN;
  return n % 2 ? s[(n - 1) / 2] : 0.5 * (s[n / 2 - 1] + s[n / 2]);
}
import type { DynSpec } from './dynspec.js';

/**
 * Interference flagging of a dynamic spectrum (science.md "RFI"):
 * - whole channels whose noise — the robust σ of second differences along time,
 *   1.4826·MAD/√6, which scintles (smooth in time) barely change — lies above
 *   the upper Tukey fence Q3 + k·IQR of log σ over all channels (Tukey 1977; k = `fence`, 1.5 by
 *   default), or is under a tenth of the typical (dead channels). (A channel's level is not
 *   used: scintles move it far more than the fences allow.)
 * - single pixels beyond `pixelSigma` (5) robust σ from a 9-sub-integration running median
 *   along their channel (σ: the larger of the channel's noise and its residuals' robust
 *   spread, so fast scintles are not taken for bursts), grown by one pixel in frequency and
 *   time to catch the edges of a burst;
 * - whole sub-integrations whose mean residual (in units of each channel's noise) over the
 *   unflagged channels lies beyond `pixelSigma` robust σ of all sub-integrations' means, or
 *   with more than half their pixels flagged.
 * A flagged channel is `persistent` when its noise is beyond the fence in both halves of the
 * observation as well, `intermittent` otherwise (science.md: persistent channels
 * are remembered per receiver; intermittent ones are found per sub-integration).
 */
export interface RfiOptions {
  fence: number;
  pixelSigma: number;
  /** channels flagged before the run (a remembered persistent mask), by index */
  startMask?: number[];
}

export interface FlaggedChannel {
  channel: number;
  freqMhz: number;
  kind: 'persistent' | 'intermittent' | 'given' | 'dead';
}

export interface RfiResult {
  /** nchan × nsub, 1 = flagged (input mask included) */
  mask: Uint8Array;
  channels: FlaggedChannel[];
  subints: number[];
  /** pixels flagged singly (after growing), outside flagged channels and sub-integrations */
  pixels: number;
  flaggedFraction: number;
  /** 1 − √(Σ_kept M² / Σ_all M²): the matched-filter S/N lost to flagging */
  snrCostFraction: number;
  /** the smooth signal M: a running median along time (for the S/N cost) */
  model: Float64Array;
  /** per-channel robust noise σ */
  noise: Float64Array;
}

/** sub-integrations in the running median along time for single-pixel flags */
const TIME_WINDOW = 9;

/** Running median of `w` points (centred, clipped at the edges) over values with mask 0. */
function runningMedian(
  src: Float64Array,
  mask: Uint8Array,
  n: number,
  stride: number,
  offset: number,
  out: Float64Array,
  buf: Float64Array,
  window: number,
): void {
  const half = window >> 1;
  for (let i = 0; i < n; i++) {
    let m = 0;
    for (let jj = i - half; jj <= i + half; jj++) {
      // beyond the ends, point reflection through the end value (x₋ⱼ = 2x₀ − xⱼ), so that a
      // slope carries on and does not pull the medians near the edges
      if (jj >= 0 && jj < n) {
        const k = offset + jj * stride;
        if (!mask[k]) buf[m++] = src[k];
        continue;
      }
      const end = jj < 0 ? 0 : n - 1;
      const j = jj < 0 ? Math.min(-jj, n - 1) : Math.max(2 * (n - 1) - jj, 0);
      const ke = offset + end * stride;
      const k = offset + j * stride;
      if (!mask[k] && !mask[ke]) buf[m++] = 2 * src[ke] - src[k];
    }
    const k = offset + i * stride;
    if (m === 0) out[k] = NaN;
    else {
      // insertion sort: a handful of values
      for (let a = 1; a < m; a++) {
        const v = buf[a];
        let b = a - 1;
        while (b >= 0 && buf[b] > v) {
          buf[b + 1] = buf[b];
          b--;
        }
        buf[b + 1] = v;
      }
      out[k] = m % 2 ? buf[m >> 1] : (buf[m / 2 - 1] + buf[m / 2]) / 2;
    }
  }
}

function quartiles(v: number[]): { q1: number; q3: number } {
  const s = [...v].sort((a, b) => a - b);
  const at = (p: number) => {
    const x = p * (s.length - 1);
    const lo = Math.floor(x);
    return s[lo] + (s[Math.min(lo + 1, s.length - 1)] - s[lo]) * (x - lo);
  };
  return { q1: at(0.25), q3: at(0.75) };
}

/** Upper Tukey fence Q3 + k·IQR of the finite values. */
export function upperFence(values: ArrayLike<number>, k: number): number {
  const v = Array.from(values).filter(Number.isFinite);
  if (v.length < 4) return Infinity;
  const { q1, q3 } = quartiles(v);
  return q3 + k * (q3 - q1);
}

/** Channel level and noise over sub-integrations [t0, t1), unflagged pixels only. */
function channelStats(
  ds: DynSpec,
  mask: Uint8Array,
  t0: number,
  t1: number,
): { level: Float64Array; noise: Float64Array } {
  const { nchan, nsub, data } = ds;
  const level = new Float64Array(nchan).fill(NaN);
  const noise = new Float64Array(nchan).fill(NaN);
  const vals: number[] = [];
  const diffs: number[] = [];
  for (let c = 0; c < nchan; c++) {
    vals.length = 0;
    diffs.length = 0;
    for (let t = t0; t < t1; t++) {
      const i = c * nsub + t;
      if (mask[i]) continue;
      vals.push(data[i]);
      if (t > t0 && t + 1 < t1 && !mask[i - 1] && !mask[i + 1])
        diffs.push(data[i - 1] - 2 * data[i] + data[i + 1]);
    }
    if (vals.length < 3 || diffs.length < 2) continue;
    level[c] = median(vals);
    // noise from second differences along time (white noise: variance 6σ²): scintles, smooth
    // over many sub-integrations, barely change them even where they are bright
    const m = median(diffs);
    noise[c] = (1.4826 * median(diffs.map((r) => Math.abs(r - m)))) / Math.sqrt(6);
  }
  return { level, noise };
}

/** Channels beyond the fences for these statistics (and dead ones). */
function fencedChannels(
  stats: { level: Float64Array; noise: Float64Array },
  k: number,
): { over: Set<number>; dead: Set<number> } {
  // fences on log σ: a scale estimate's scatter is skewed upwards, its logarithm's is not
  const logs = Array.from(stats.noise, (v) => (v > 0 ? Math.log(v) : NaN));
  const fNoise = upperFence(logs, k);
  const typical = median(Array.from(stats.noise).filter(Number.isFinite));
  const over = new Set<number>();
  const dead = new Set<number>();
  stats.noise.forEach((nz, c) => {
    if (!Number.isFinite(nz)) return;
    if (nz < 0.1 * typical) dead.add(c);
    else if (logs[c] > fNoise) over.add(c);
  });
  return { over, dead };
}

export function flagRfi(ds: DynSpec, opts: RfiOptions): RfiResult {
  const { nchan, nsub, data } = ds;
  const mask = ds.inputMask.slice();
  const channels: FlaggedChannel[] = [];
  const flagChannel = (c: number, kind: FlaggedChannel['kind']) => {
    channels.push({ channel: c, freqMhz: ds.freqs[c], kind });
    for (let t = 0; t < nsub; t++) mask[c * nsub + t] = 1;
  };
  for (const c of opts.startMask ?? []) if (c >= 0 && c < nchan) flagChannel(c, 'given');
  // channels entirely missing in the input count as given flags
  for (let c = 0; c < nchan; c++) {
    if (channels.some((f) => f.channel === c)) continue;
    let all = true;
    for (let t = 0; t < nsub && all; t++) all = ds.inputMask[c * nsub + t] === 1;
    if (all) flagChannel(c, 'given');
  }

  // 1. channel fences on the whole observation, then per quarter for the classification
  const whole = channelStats(ds, mask, 0, nsub);
  const { over, dead } = fencedChannels(whole, opts.fence);
  const quarters = nsub >= 32 ? 2 : 1;
  const votes = new Int32Array(nchan);
  for (let q = 0; q < quarters; q++) {
    const t0 = Math.floor((q * nsub) / quarters);
    const t1 = Math.floor(((q + 1) * nsub) / quarters);
    const part = fencedChannels(channelStats(ds, mask, t0, t1), opts.fence);
    for (const c of part.over) votes[c]++;
  }
  for (const c of dead) flagChannel(c, 'dead');
  for (const c of over)
    flagChannel(c, quarters === 1 || votes[c] === quarters ? 'persistent' : 'intermittent');

  // 2. pixels beyond pixelSigma robust σ of their channel from a running median along time
  //    (scintles last many sub-integrations, so it follows them even where they are narrower
  //    than a channel; a burst of up to four sub-integrations stands out)
  const noise = channelStats(ds, mask, 0, nsub).noise;
  const along = new Float64Array(nchan * nsub);
  const tbuf = new Float64Array(TIME_WINDOW);
  for (let c = 0; c < nchan; c++)
    runningMedian(data, mask, nsub, 1, c * nsub, along, tbuf, TIME_WINDOW);
  const typicalNoise = median(Array.from(noise).filter(Number.isFinite)) || 0;
  const hit = new Uint8Array(nchan * nsub);
  const resid: number[] = [];
  for (let c = 0; c < nchan; c++) {
    // the spread of this channel's residuals from the running median: white noise where the
    // scintles are slow, more where they change within a few sub-integrations (then only
    // brighter spikes count as interference)
    resid.length = 0;
    for (let t = 0; t < nsub; t++) {
      const i = c * nsub + t;
      if (!mask[i]) resid.push(data[i] - along[i]);
    }
    const mr = resid.length ? median(resid) : 0;
    const spread = resid.length >= 8 ? 1.4826 * median(resid.map((v) => Math.abs(v - mr))) : NaN;
    const base = Number.isFinite(noise[c]) && noise[c] > 0 ? noise[c] : typicalNoise;
    const sigma = Number.isFinite(spread) ? Math.max(spread, base) : base;
    if (!(sigma > 0)) continue;
    for (let t = 0; t < nsub; t++) {
      const i = c * nsub + t;
      if (!mask[i] && Math.abs(data[i] - along[i]) > opts.pixelSigma * sigma) hit[i] = 1;
    }
  }
  // grow each hit by one sub-integration either side (a burst's edges), and by one channel
  // only where the neighbouring channel has a hit of its own in the same sub-integration
  let pixels = 0;
  for (let c = 0; c < nchan; c++)
    for (let t = 0; t < nsub; t++) {
      if (!hit[c * nsub + t]) continue;
      const wide = (c > 0 && hit[(c - 1) * nsub + t]) || (c + 1 < nchan && hit[(c + 1) * nsub + t]);
      for (let dc = wide ? -1 : 0; dc <= (wide ? 1 : 0); dc++)
        for (let dt = -1; dt <= 1; dt++) {
          const cc = c + dc;
          const tt = t + dt;
          if (cc < 0 || cc >= nchan || tt < 0 || tt >= nsub) continue;
          const i = cc * nsub + tt;
          if (!mask[i]) {
            mask[i] = 1;
            pixels++;
          }
        }
    }

  // 3. sub-integrations: median residual over unflagged channels, and the flagged share
  const subMean = new Float64Array(nsub).fill(NaN);
  const subFlagged = new Float64Array(nsub);
  const res: number[] = [];
  for (let t = 0; t < nsub; t++) {
    res.length = 0;
    let flagged = 0;
    for (let c = 0; c < nchan; c++) {
      const i = c * nsub + t;
      if (mask[i]) flagged++;
      else res.push((data[i] - along[i]) / (noise[c] > 0 ? noise[c] : typicalNoise || 1));
    }
    subFlagged[t] = flagged / nchan;
    // the mean (a running median's residual is exactly zero at many pixels, so their median
    // is mostly 0); single outliers are already masked as pixels
    if (res.length >= 3) subMean[t] = res.reduce((a, b) => a + b, 0) / res.length;
  }
  // a broadband burst lifts a whole sub-integration: its mean residual beyond pixelSigma
  // robust σ of all sub-integrations' means
  const finiteSub = Array.from(subMean).filter(Number.isFinite);
  const centre = median(finiteSub);
  const spread = 1.4826 * median(finiteSub.map((v) => Math.abs(v - centre)));
  const fSub = centre + opts.pixelSigma * spread;
  const subints: number[] = [];
  for (let t = 0; t < nsub; t++) {
    if (subFlagged[t] > 0.5 || subMean[t] > fSub) {
      subints.push(t);
      for (let c = 0; c < nchan; c++) mask[c * nsub + t] = 1;
    }
  }

  // totals and the S/N cost, weighting each pixel by its smooth signal
  let flaggedCount = 0;
  let sumAll = 0;
  let sumKept = 0;
  // the smooth signal: the running median along time (unflagged pixels only)
  const finalModel = new Float64Array(nchan * nsub);
  for (let c = 0; c < nchan; c++)
    runningMedian(data, mask, nsub, 1, c * nsub, finalModel, tbuf, TIME_WINDOW);
  for (let i = 0; i < finalModel.length; i++) if (Number.isNaN(finalModel[i])) finalModel[i] = 0;
  for (let i = 0; i < mask.length; i++) {
    if (mask[i]) flaggedCount++;
    const s = Math.max(finalModel[i], 0);
    sumAll += s * s;
    if (!mask[i]) sumKept += s * s;
  }
  channels.sort((a, b) => a.channel - b.channel);
  return {
    mask,
    channels,
    subints,
    pixels,
    flaggedFraction: flaggedCount / mask.length,
    // nothing left is everything lost, whatever the (then undefined) smooth spectrum says
    snrCostFraction:
      flaggedCount === mask.length ? 1 : sumAll > 0 ? 1 - Math.sqrt(sumKept / sumAll) : 0,
    model: finalModel,
    noise,
  };
}

/**
 * Fill flagged pixels by linear interpolation in frequency within each sub-integration (for
 * pictures; common practice), holding the nearest value beyond the band edges; a
 * sub-integration with no unflagged pixel is filled with the mean of the rest.
 */
export function interpolateFlagged(ds: DynSpec, mask: Uint8Array): Float64Array {
  const { nchan, nsub, data } = ds;
  const out = data.slice();
  let sum = 0;
  let n = 0;
  for (let i = 0; i < data.length; i++)
    if (!mask[i]) {
      sum += data[i];
      n++;
    }
  const mean = n ? sum / n : 0;
  for (let t = 0; t < nsub; t++) {
    let prev = -1;
    for (let c = 0; c <= nchan; c++) {
      if (c < nchan && mask[c * nsub + t]) continue;
      // fill channels prev+1 … c−1
      for (let g = prev + 1; g < c; g++) {
        const i = g * nsub + t;
        if (prev < 0 && c >= nchan) out[i] = mean;
        else if (prev < 0) out[i] = data[c * nsub + t];
        else if (c >= nchan) out[i] = data[prev * nsub + t];
        else {
          const w = (g - prev) / (c - prev);
          out[i] = (1 - w) * data[prev * nsub + t] + w * data[c * nsub + t];
        }
      }
      prev = c;
    }
  }
  return out;
}
