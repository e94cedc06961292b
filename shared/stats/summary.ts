/** Median of a numeric array (copy sorted; NaN-free input expected). */
export function median(values: ArrayLike<number>): number {
  const s = Array.from(values).sort((a, b) => a - b);
  const n = s.length;
  if (n === 0) return NaN;
  return n % 2 ? s[(n - 1) / 2] : 0.5 * (s[n / 2 - 1] + s[n / 2]);
}

/** Median absolute deviation scaled to σ for Gaussian data: 1.4826·MAD (common practice). */
export function robustSigma(values: ArrayLike<number>): number {
  const m = median(values);
  const dev = Array.from(values, (v) => Math.abs(v - m));
  return 1.4826 * median(dev);
}

export function weightedMean(
  values: ArrayLike<number>,
  errors: ArrayLike<number>,
): { mean: number; err: number } {
  let sw = 0;
  let swx = 0;
  for (let i = 0; i < values.length; i++) {
    const w = 1 / (errors[i] * errors[i]);
    sw += w;
    swx += w * values[i];
  }
  return { mean: swx / sw, err: Math.sqrt(1 / sw) };
}
