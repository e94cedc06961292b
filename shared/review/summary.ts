// What a correction run holds, in a few numbers for lists and notices; and which pulsar it is for.
import type { DmFitResult } from '../schemas/dm-fit.js';
import type { DmSeriesResult } from '../schemas/dm-series.js';
import type { ScatterFitResult } from '../schemas/scatter-fit.js';

export type RunResult = DmFitResult | DmSeriesResult | ScatterFitResult;
export type RunKind = 'dm-fit' | 'dm-series' | 'scatter-fit';

/** "sightline/dm-fit@1" → "dm-fit" */
export function kindOf(result: { schema: string }): RunKind {
  return result.schema.slice('sightline/'.length, result.schema.indexOf('@')) as RunKind;
}

/** The pulsars a result is about, sorted. */
export function sourcesOf(result: RunResult): string[] {
  let names: string[];
  if (result.schema === 'sightline/scatter-fit@1') names = [result.source];
  else if (result.schema === 'sightline/dm-fit@1') names = result.visits.map((v) => v.source);
  else names = result.points.map((p) => p.source);
  return [...new Set(names)].sort();
}

const median = (xs: number[]): number | null => {
  if (xs.length === 0) return null;
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
};
const range = (xs: number[]): [number, number] | null =>
  xs.length ? [Math.min(...xs), Math.max(...xs)] : null;

export type RunSummary = Record<string, number | string | boolean | null | [number, number]>;

export function summarise(result: RunResult): RunSummary {
  if (result.schema === 'sightline/dm-fit@1') {
    const fitted = result.visits.filter((v) => v.status === 'fitted' && v.dm !== null);
    return {
      n_visits: result.visits.length,
      n_fitted: fitted.length,
      n_unconstrained: result.visits.length - fitted.length,
      n_warnings: result.visits.reduce((n, v) => n + v.warnings.length, 0),
      mjd_range: range(result.visits.map((v) => v.mjd)),
      dm_median: median(fitted.map((v) => v.dm as number)),
      dm_err_median: median(fitted.map((v) => (v.dm_err_scaled ?? v.dm_err) as number)),
      chromatic: result.visits.some((v) => v.tau_ref_us !== undefined),
    };
  }
  if (result.schema === 'sightline/dm-series@1') {
    return {
      n_points: result.points.length,
      mjd_range: range(result.points.map((p) => p.mjd)),
      dm_range: range(result.points.map((p) => p.dm)),
      dm_err_median: median(result.points.map((p) => p.dm_err)),
      smoothed: result.smooth !== undefined && result.smooth !== null,
    };
  }
  const pl = result.power_law;
  return {
    mjd: result.mjd,
    n_bands: result.bands.length,
    n_fitted: result.bands.filter((b) => b.status === 'fitted').length,
    alpha: pl?.alpha ?? null,
    alpha_err: pl?.alpha_err ?? null,
    tau_ref_us: pl?.tau_ref_us ?? null,
    ref_freq_mhz: pl?.ref_freq_mhz ?? null,
  };
}
