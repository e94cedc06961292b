import { median } from '../stats/summary.js';

/**
 * Per-bin noise from differences of neighbouring bins: σ ≈ 1.4826·MAD(Δ)/√2. Smooth signal
 * (a long scattering tail with no off-pulse region) barely changes bin-to-bin differences, so
 * this works where an off-pulse window does not exist (common practice).
 */
export function noiseFromDifferences(bins: ArrayLike<number>): number {
  const n = bins.length;
  const d = new Float64Array(n);
  for (let i = 0; i < n; i++) d[i] = bins[(i + 1) % n] - bins[i];
  const m = median(d);
  for (let i = 0; i < n; i++) d[i] = Math.abs(d[i] - m);
  return (1.4826 * median(d)) / Math.SQRT2;
}

/** Mean of the contiguous (circular) window of `fraction` of the bins with the lowest mean. */
export function offPulseLevel(bins: ArrayLike<number>, fraction = 0.25): number {
  const n = bins.length;
  const w = Math.max(1, Math.round(n * fraction));
  let sum = 0;
  for (let i = 0; i < w; i++) sum += bins[i];
  let best = sum;
  for (let i = 1; i < n; i++) {
    sum += bins[(i + w - 1) % n] - bins[i - 1];
    if (sum < best) best = sum;
  }
  return best / w;
}

export interface PulseShape {
  baseline: number;
  peakBin: number;
  height: number;
  area: number;
  /** Gaussian σ from the leading edge's half-width (scattering leaves the leading edge alone) */
  sigma: number;
  /** a rough scattering time from the excess of area over the Gaussian's */
  tau: number;
}

/** Starting values for a scattered-pulse fit, read off the profile. */
export function pulseShape(bins: ArrayLike<number>): PulseShape {
  const n = bins.length;
  const baseline = offPulseLevel(bins);
  let peakBin = 0;
  let peak = -Infinity;
  for (let i = 0; i < n; i++) {
    const v = (bins[(i - 1 + n) % n] + bins[i] + bins[(i + 1) % n]) / 3;
    if (v > peak) {
      peak = v;
      peakBin = i;
    }
  }
  const height = Math.max(peak - baseline, 1e-12);
  let area = 0;
  for (let i = 0; i < n; i++) area += bins[i] - baseline;
  area = Math.max(area, height);
  let left = 0;
  while (left < n / 2 && bins[(peakBin - left - 1 + n) % n] - baseline > height / 2) left++;
  const sigma = Math.max(0.5, (left + 0.5) / 1.1774);
  const tau = Math.max(0.05 * sigma, area / height - 2.5066 * sigma);
  return { baseline, peakBin, height, area, sigma, tau };
}
