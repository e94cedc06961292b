const DURATION_UNITS = [
  { unit: 's', perS: 1 },
  { unit: 'ms', perS: 1e3 },
  { unit: 'µs', perS: 1e6 },
  { unit: 'ns', perS: 1e9 },
] as const;

/** A duration in the largest unit (s, ms, µs, ns) that keeps the figure at 1 or above. */
export function formatDuration(valueS: number): { text: string; unit: string } {
  const magnitude = Math.abs(valueS);
  const pick =
    DURATION_UNITS.find(({ perS }) => magnitude * perS >= 1) ??
    DURATION_UNITS[DURATION_UNITS.length - 1];
  return { text: fixed(valueS * pick.perS, 3), unit: pick.unit };
}

/** Full-precision seconds for copying into other tools. */
export function formatSeconds(valueS: number): string {
  return valueS.toExponential(6).replace('-', '−');
}

/** Fixed decimals with a true minus sign (no grouping, so figures copy cleanly). */
export function fixed(value: number, decimals: number): string {
  return value.toFixed(decimals).replace('-', '−');
}

const missing = (x: number | null | undefined): x is null | undefined =>
  x === null || x === undefined || !Number.isFinite(x);

/** Fixed decimals, "—" when missing. */
export function dec(x: number | null | undefined, decimals: number): string {
  return missing(x) ? '—' : fixed(x, decimals);
}

/** A number to `n` significant figures with a true minus sign, "—" when missing. */
export function sig(x: number | null | undefined, n = 3): string {
  if (missing(x)) return '—';
  if (x === 0) return '0';
  const mag = Math.floor(Math.log10(Math.abs(x)));
  if (mag >= 6 || mag <= -5) return x.toExponential(n - 1).replace(/-/g, '−');
  return fixed(x, Math.max(0, n - 1 - mag));
}

/** Decimals that show an uncertainty to two significant figures (and its value to match). */
export function decimalsFor(err: number | null | undefined, fallback = 4): number {
  if (missing(err) || err <= 0) return fallback;
  return Math.min(9, Math.max(0, 1 - Math.floor(Math.log10(err))));
}

/** Median of the finite numbers (NaN when there are none). */
export function median(values: (number | null | undefined)[]): number {
  const v = values
    .filter((x): x is number => typeof x === 'number' && Number.isFinite(x))
    .sort((a, b) => a - b);
  if (!v.length) return NaN;
  const m = v.length >> 1;
  return v.length % 2 ? v[m] : (v[m - 1] + v[m]) / 2;
}

/** An MJD to three decimals (about a minute and a half), as the run tables and tooltips show it. */
export const mjdText = (mjd: number) => fixed(mjd, 3);
