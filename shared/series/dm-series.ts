import type { VisitFitJson } from '../schemas/dm-fit.js';
import type { DmSeriesResult, SeriesPoint, SmoothPoint } from '../schemas/dm-series.js';
import { fitGp } from './gp.js';
import { solarWindDmAt } from '../solar/solar-wind.js';
import { weightedMean } from '../stats/summary.js';

export interface Position {
  raDeg: number;
  decDeg: number;
}

export interface SeriesOptions {
  smooth: 'none' | 'gp';
  /** subtract a spherical solar wind of this density at 1 AU (cm⁻³) */
  solarN0?: number;
  positions?: Map<string, Position>;
  /** reference DM for every source; default: weighted mean (absolute) or 0 (offsets) */
  referenceDm?: number;
  /** spacing of the smooth curve, days */
  gridStepDays?: number;
}

type SeriesBody = Pick<DmSeriesResult, 'sources' | 'points' | 'smooth'>;

/**
 * A DM series per source from per-visit fits: fitted visits only, errors scaled by √χ²_red
 * when it exceeds 1, optional solar-wind subtraction and Gaussian-process smoothing.
 */
export function buildDmSeries(visits: VisitFitJson[], opts: SeriesOptions): SeriesBody {
  const bySource = new Map<string, VisitFitJson[]>();
  for (const v of visits) {
    const list = bySource.get(v.source) ?? [];
    list.push(v);
    bySource.set(v.source, list);
  }
  const out: SeriesBody = {
    sources: [],
    points: [],
    smooth: opts.smooth === 'gp' ? [] : undefined,
  };
  for (const [source, list] of bySource) {
    const kinds = new Set(list.map((v) => v.dm_kind));
    if (kinds.size > 1) throw new RangeError(`${source}: mixes absolute DMs and DM offsets`);
    const dmKind = list[0].dm_kind;
    const pos = opts.positions?.get(source);
    if (opts.solarN0 !== undefined && !pos) {
      throw new RangeError(
        `${source}: --solar needs the pulsar's position (--ra/--dec or --positions)`,
      );
    }
    const points: SeriesPoint[] = [];
    let mjdFirst = Infinity;
    let mjdLast = -Infinity;
    for (const v of list) {
      if (v.status !== 'fitted' || v.dm === null || v.dm_err_scaled === null) continue;
      mjdFirst = Math.min(mjdFirst, v.mjd_first);
      mjdLast = Math.max(mjdLast, v.mjd_last);
      const p: SeriesPoint = {
        source,
        mjd: v.mjd,
        dm: v.dm,
        dm_err: v.dm_err_scaled,
        n_toas: v.n_toas,
      };
      if (opts.solarN0 !== undefined && pos) {
        p.dm_solar = solarWindDmAt(opts.solarN0, pos.raDeg, pos.decDeg, v.mjd).dm;
        p.dm = v.dm - p.dm_solar;
      }
      points.push(p);
    }
    points.sort((a, b) => a.mjd - b.mjd);
    const reference =
      opts.referenceDm !== undefined ? 'given' : dmKind === 'offset' ? 'zero' : 'weighted_mean';
    const referenceDm =
      opts.referenceDm ??
      (dmKind === 'offset' || points.length === 0
        ? 0
        : weightedMean(
            points.map((p) => p.dm),
            points.map((p) => p.dm_err),
          ).mean);
    const entry: SeriesBody['sources'][number] = {
      source,
      dm_kind: dmKind,
      reference_dm: referenceDm,
      reference,
      n_points: points.length,
      n_unconstrained: list.length - points.length,
      ...(points.length ? { mjd_first: mjdFirst, mjd_last: mjdLast } : {}),
      ...(pos ? { ra_deg: pos.raDeg, dec_deg: pos.decDeg } : {}),
    };
    if (opts.smooth === 'gp' && points.length >= 3) {
      const t = points.map((p) => p.mjd);
      const gp = fitGp(
        t,
        points.map((p) => p.dm),
        points.map((p) => p.dm_err),
      );
      entry.gp = {
        amplitude_dm: gp.amplitude,
        length_days: gp.lengthDays,
        white_dm: gp.white,
        mean_dm: gp.mean,
        log_likelihood: gp.logLikelihood,
      };
      const t0 = t[0];
      const t1 = t[t.length - 1];
      const step = opts.gridStepDays ?? Math.max((t1 - t0) / 2000, Math.min(1, gp.lengthDays / 5));
      const grid: number[] = [];
      for (let s = t0; s < t1; s += step) grid.push(s);
      grid.push(t1);
      const pred = gp.predict(grid);
      grid.forEach((mjd, i) => {
        const sp: SmoothPoint = {
          source,
          mjd: Number(mjd.toFixed(6)),
          dm: pred.mean[i],
          dm_err: pred.sd[i],
        };
        out.smooth!.push(sp);
      });
    }
    out.sources.push(entry);
    out.points.push(...points);
  }
  return out;
}
