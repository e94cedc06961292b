// A result as one flat table (the rows of `--format csv` and of a run's CSV export).
import type { DmFitResult } from '../schemas/dm-fit.js';
import type { DmSeriesResult } from '../schemas/dm-series.js';
import type { ScatterFitResult } from '../schemas/scatter-fit.js';
import type { ScintResult } from '../schemas/scint.js';

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

/**
 * One row per scint result (one visit). The names match `sightline scint analyse --format csv`;
 * the flagged channels follow as `;`-separated lists in channel order (index, MHz and kind).
 */
export const SCINT_COLUMNS = [
  'source',
  'mjd',
  'receiver',
  'status',
  'freq_min_mhz',
  'freq_max_mhz',
  'ref_freq_mhz',
  'channel_mhz',
  'nchan',
  'nsub',
  'flagged_fraction',
  'snr_cost_fraction',
  'dnu_d_mhz',
  'dnu_d_err_mhz',
  'dnu_d_upper_mhz',
  'dt_d_s',
  'dt_d_err_s',
  'n_scintles',
  'c1',
  'tau_us',
  'tau_err_us',
  'tau_lower_us',
  'eta_s3',
  'tau_from_tails_us',
  'tau_from_tails_err_us',
  'channels_flagged',
  'channels_flagged_mhz',
  'channels_flagged_kind',
  'subints_flagged',
  'warnings',
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

export function scintRows(r: ScintResult): Rows {
  const channels = [...r.rfi.channels].sort((a, b) => a.channel - b.channel);
  const cells: Record<(typeof SCINT_COLUMNS)[number], Cell> = {
    source: r.source,
    mjd: r.mjd,
    receiver: r.receiver,
    status: r.status,
    freq_min_mhz: r.freq_min_mhz,
    freq_max_mhz: r.freq_max_mhz,
    ref_freq_mhz: r.ref_freq_mhz,
    channel_mhz: r.channel_mhz,
    nchan: r.nchan,
    nsub: r.nsub,
    flagged_fraction: r.rfi.flagged_fraction,
    snr_cost_fraction: r.rfi.snr_cost_fraction,
    dnu_d_mhz: r.dnu_d_mhz,
    dnu_d_err_mhz: r.dnu_d_err_mhz,
    dnu_d_upper_mhz: r.dnu_d_upper_mhz,
    dt_d_s: r.dt_d_s,
    dt_d_err_s: r.dt_d_err_s,
    n_scintles: r.n_scintles,
    c1: r.c1,
    tau_us: r.tau_us,
    tau_err_us: r.tau_err_us,
    tau_lower_us: r.tau_lower_us,
    eta_s3: r.arc_curvature?.eta_s3 ?? null,
    tau_from_tails_us: r.tau_from_tails?.tau_us ?? null,
    tau_from_tails_err_us: r.tau_from_tails?.tau_err_us ?? null,
    channels_flagged: channels.map((c) => c.channel).join(';'),
    channels_flagged_mhz: channels.map((c) => c.freq_mhz).join(';'),
    channels_flagged_kind: channels.map((c) => c.kind).join(';'),
    subints_flagged: r.rfi.subints_flagged.join(';'),
    warnings: r.warnings.join(';'),
  };
  return { head: [...SCINT_COLUMNS], rows: [SCINT_COLUMNS.map((c) => cells[c])] };
}

export function resultRows(r: DmFitResult | DmSeriesResult | ScatterFitResult | ScintResult): Rows {
  if (r.schema === 'sightline/dm-fit@1') return dmFitRows(r);
  if (r.schema === 'sightline/scint@1') return scintRows(r);
  if (r.schema === 'sightline/dm-series@1') return seriesRows(r);
  return bandRows(r);
}
