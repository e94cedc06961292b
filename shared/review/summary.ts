// What a correction run holds, in a few numbers for lists and notices; and which pulsar it is for.
import type { DmFitResult } from '../schemas/dm-fit.js';
import type { DmSeriesResult } from '../schemas/dm-series.js';
import type { ScatterFitResult } from '../schemas/scatter-fit.js';
import type { ScintResult } from '../schemas/scint.js';

export type RunResult = DmFitResult | DmSeriesResult | ScatterFitResult | ScintResult;
export type RunKind = 'dm-fit' | 'dm-series' | 'scatter-fit' | 'scint';

/** "sightline/dm-fit@1" → "dm-fit" */
export function kindOf(result: { schema: string }): RunKind {
  return result.schema.slice('sightline/'.length, result.schema.indexOf('@')) as RunKind;
}

/** The pulsars a result is about, sorted. */
export function sourcesOf(result: RunResult): string[] {
  let names: string[];
  if (result.schema === 'sightline/scatter-fit@1' || result.schema === 'sightline/scint@1')
    names = [result.source];
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
// a loop, not Math.min(...xs): a spread of a million visits overflows the stack
const range = (xs: number[]): [number, number] | null => {
  if (xs.length === 0) return null;
  let lo = xs[0];
  let hi = xs[0];
  for (const x of xs) {
    if (x < lo) lo = x;
    if (x > hi) hi = x;
  }
  return [lo, hi];
};

export type RunSummary = Record<string, number | string | boolean | null | [number, number]>;

export function summarise(result: RunResult): RunSummary {
  if (result.schema === 'sightline/scint@1') return scintSummary(result);
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

/**
 * A scint run: the visit, the receiver, the status, Δν_d, Δt_d and τ with their errors (or, when
 * the scintles are unresolved, the Δν_d upper and τ lower limits), and the interference flags.
 */
function scintSummary(r: ScintResult): RunSummary {
  const count = (kind: string) => r.rfi.channels.filter((c) => c.kind === kind).length;
  return {
    mjd: r.mjd,
    receiver: r.receiver,
    status: r.status,
    freq_range_mhz: [r.freq_min_mhz, r.freq_max_mhz],
    channel_mhz: r.channel_mhz,
    ref_freq_mhz: r.ref_freq_mhz,
    dnu_d_mhz: r.dnu_d_mhz,
    dnu_d_err_mhz: r.dnu_d_err_mhz,
    dnu_d_upper_mhz: r.dnu_d_upper_mhz,
    dt_d_s: r.dt_d_s,
    dt_d_err_s: r.dt_d_err_s,
    tau_us: r.tau_us,
    tau_err_us: r.tau_err_us,
    tau_lower_us: r.tau_lower_us,
    flagged_fraction: r.rfi.flagged_fraction,
    n_channels_flagged: r.rfi.channels.length,
    n_persistent_channels: count('persistent'),
    n_given_channels: count('given'),
    n_warnings: r.warnings.length,
  };
}
