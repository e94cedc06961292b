import type { RunResultJson } from '../../../../shared/schemas/api';

/** Plot colours: the design tokens of styles.css (plots cannot read Tailwind classes). */
export const TOKEN = {
  ink: '#18202b',
  inkSoft: '#4a5566',
  accent: '#0b6374',
  alert: '#b42318',
  rule: '#dcd9d0',
  edge: '#868b93',
  superseded: '#6b7079',
} as const;

export interface DmPoint {
  mjd: number;
  dm: number;
  /** quoted 1σ (a visit's χ²-scaled error when the fit gives it) */
  err: number | null;
}

export interface DmSeriesOfRun {
  /** DMs are absolute, or offsets from a reference (timing residuals give offsets) */
  dmKind: 'absolute' | 'offset' | 'mixed';
  points: DmPoint[];
  /** a smoothed curve when the result has one (dm-series with smoothing) */
  smooth: DmPoint[];
}

/** The DM values of a dm-fit or dm-series result for one pulsar (all sources when none given). */
export function dmSeriesOf(result: RunResultJson, source?: string | null): DmSeriesOfRun | null {
  const keep = (s: string) => !source || s === source;
  if (result.schema === 'sightline/dm-fit@1') {
    const visits = result.visits.filter(
      (v) => keep(v.source) && v.status === 'fitted' && v.dm !== null,
    );
    const kinds = new Set(visits.map((v) => v.dm_kind));
    return {
      dmKind: kinds.size > 1 ? 'mixed' : (([...kinds][0] ?? 'absolute') as 'absolute' | 'offset'),
      points: visits.map((v) => ({
        mjd: v.mjd,
        dm: v.dm as number,
        err: v.dm_err_scaled ?? v.dm_err,
      })),
      smooth: [],
    };
  }
  if (result.schema === 'sightline/dm-series@1') {
    const kinds = new Set(result.sources.filter((s) => keep(s.source)).map((s) => s.dm_kind));
    return {
      dmKind: kinds.size > 1 ? 'mixed' : (([...kinds][0] ?? 'absolute') as 'absolute' | 'offset'),
      points: result.points
        .filter((p) => keep(p.source))
        .map((p) => ({ mjd: p.mjd, dm: p.dm, err: p.dm_err })),
      smooth: (result.smooth ?? [])
        .filter((p) => keep(p.source))
        .map((p) => ({ mjd: p.mjd, dm: p.dm, err: p.dm_err })),
    };
  }
  return null;
}

export interface TauPoint {
  freq: number;
  tau: number;
  err: number | null;
  /** upper limits are drawn as such, not as measurements */
  limit: boolean;
}

export interface TauOfRun {
  bands: TauPoint[];
  /** τ(ν) = τ_ref (ν/ν_ref)^−α over the fitted bands' span, when there is a power law */
  law: { freq: number; tau: number }[];
  refFreqMhz: number | null;
}

export function tauOf(result: RunResultJson): TauOfRun | null {
  if (result.schema !== 'sightline/scatter-fit@1') return null;
  const bands: TauPoint[] = [];
  for (const b of result.bands) {
    if (b.status === 'fitted' && b.tau_us > 0)
      bands.push({ freq: b.freq_mhz, tau: b.tau_us, err: b.tau_err_us, limit: false });
    else if (b.status === 'upper_limit' && (b.tau_upper_us ?? 0) > 0)
      bands.push({ freq: b.freq_mhz, tau: b.tau_upper_us as number, err: null, limit: true });
  }
  const pl = result.power_law;
  const law: TauOfRun['law'] = [];
  if (pl && result.bands.length) {
    const fs = result.bands.map((b) => b.freq_mhz);
    const lo = Math.min(...fs);
    const hi = Math.max(...fs);
    for (let i = 0; i <= 40; i++) {
      const f = lo * (hi / lo) ** (i / 40);
      law.push({ freq: f, tau: pl.tau_ref_us * (f / pl.ref_freq_mhz) ** -pl.alpha });
    }
  }
  return { bands, law, refFreqMhz: pl?.ref_freq_mhz ?? null };
}

export const dmAxisLabel = (kind: DmSeriesOfRun['dmKind']) =>
  kind === 'offset' ? 'DM offset (pc cm⁻³)' : kind === 'mixed' ? 'DM (pc cm⁻³)' : 'DM (pc cm⁻³)';
