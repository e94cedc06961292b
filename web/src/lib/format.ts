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
