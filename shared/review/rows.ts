// A result as one flat table (the rows of `--format csv` and of a run's CSV export).
import type { DmFitResult } from '../schemas/dm-fit.js';
import type { DmSeriesResult } from '../schemas/dm-series.js';
import type { ScatterFitResult } from '../schemas/scatter-fit.js';

export type Cell = string | number | boolean | null | undefined;
export interface Rows {
  head: string[];
  rows: Cell[][];
}

export const FIT_COLUMNS = [
  'source',
  'mjd',
  'n_toas',
  'n_freqs',
  'freq_min_mhz',
  'freq_max_mhz',
  'status',
  'dm',
  'dm_err',
  'dm_err_scaled',
  'dm_kind',
  'offset_us',
  'chi2',
  'dof',
  'reduced_chi2',
  'flagged_rows',
  'warnings',
] as const;

export const CHROMATIC_COLUMNS = [
  'tau_ref_us',
  'tau_ref_err_us',
  'alpha',
  'alpha_err',
  'ref_freq_mhz',
  'dm_tau_corr',
  'preferred',
] as const;

export const SERIES_COLUMNS = ['source', 'mjd', 'dm', 'dm_err', 'n_toas', 'dm_solar'] as const;

export const BAND_COLUMNS = [
  'freq_mhz',
  'status',
  'tau_us',
  'tau_err_us',
  'tau_upper_us',
  'chi2',
  'dof',
  'reduced_chi2',
  'snr',
] as const;

export function dmFitRows(r: DmFitResult): Rows {
  const chromatic = r.visits.some((v) => v.tau_ref_us !== undefined);
  const head = [...FIT_COLUMNS, ...(chromatic ? CHROMATIC_COLUMNS : [])];
  return {
    head,
    rows: r.visits.map((v) =>
      head.map((c) => {
        const x = v[c as keyof typeof v];
        return Array.isArray(x) ? x.join(';') : (x as Cell);
      }),
    ),
  };
}

export function seriesRows(r: DmSeriesResult): Rows {
  return {
    head: [...SERIES_COLUMNS],
    rows: r.points.map((p) => SERIES_COLUMNS.map((c) => p[c])),
  };
}

export function bandRows(r: ScatterFitResult): Rows {
  return {
    head: [...BAND_COLUMNS],
    rows: r.bands.map((b) => BAND_COLUMNS.map((c) => b[c] ?? null)),
  };
}

export function resultRows(r: DmFitResult | DmSeriesResult | ScatterFitResult): Rows {
  if (r.schema === 'sightline/dm-fit@1') return dmFitRows(r);
  if (r.schema === 'sightline/dm-series@1') return seriesRows(r);
  return bandRows(r);
}
