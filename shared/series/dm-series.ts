import type { VisitFitJson } from '../schemas/dm-fit.js';
import type { DmSeriesResult, SeriesPoint, SmoothPoint } from '../schemas/dm-series.js';
import { fitGp } from './gp.js';
import { solarWindDmAt } from '../solar/solar-wind.js';
import { median, weightedMean } from '../stats/summary.js';

/** Elongations inside the Sun's disc (~0.27°) are left out; below a few degrees, a warning. */
const SOLAR_DISC_DEG = 0.27;
const NEAR_SUN_DEG = 5;

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

/** The fields of a visit fit that a series reads. */
export type SeriesVisit = Pick<
  VisitFitJson,
  | 'source'
  | 'mjd'
  | 'mjd_first'
  | 'mjd_last'
  | 'status'
  | 'dm'
  | 'dm_err_scaled'
  | 'dm_kind'
  | 'n_toas'
>;

/**
 * A DM series per source from per-visit fits: fitted visits only, errors scaled by √χ²_red
 * when it exceeds 1, optional solar-wind subtraction and Gaussian-process smoothing.
 */
export function buildDmSeries(visits: SeriesVisit[], opts: SeriesOptions): SeriesBody {
  const bySource = new Map<string, SeriesVisit[]>();
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
    const warnings: string[] = [];
    let nearSun = 0;
    let inSun = 0;
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
        const sun = solarWindDmAt(opts.solarN0, pos.raDeg, pos.decDeg, v.mjd);
        const elongationDeg = (sun.elongationRad * 180) / Math.PI;
        if (elongationDeg < SOLAR_DISC_DEG) {
          inSun++;
          continue;
        }
        if (elongationDeg < NEAR_SUN_DEG) nearSun++;
        p.dm_solar = sun.dm;
        p.dm = v.dm - p.dm_solar;
      }
      points.push(p);
    }
    points.sort((a, b) => a.mjd - b.mjd);
    if (inSun)
      warnings.push(`${inSun} visit(s) with the line of sight inside the solar disc were left out`);
    if (nearSun) {
      warnings.push(
        `${nearSun} visit(s) within ${NEAR_SUN_DEG}° of the Sun: the spherical solar-wind model is crude there`,
      );
    }
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
      warnings,
    };
    if (opts.smooth === 'gp' && points.length >= 3) {
      const t = points.map((p) => p.mjd);
      const gp = fitGp(
        t,
        points.map((p) => p.dm),
        points.map((p) => p.dm_err),
      );
      const medErr = median(points.map((p) => p.dm_err));
      const flat = gp.amplitude < 0.1 * medErr;
      const whiteHeavy = gp.white > medErr && gp.white > gp.amplitude;
      if (flat)
        warnings.push(
          'the GP finds no DM variation beyond the errors: its curve is the mean, so corrections use the visits',
        );
      if (whiteHeavy) {
        warnings.push(
          `the GP leaves most scatter to extra white noise (w = ${gp.white.toPrecision(2)} > median error ${medErr.toPrecision(2)}): corrections use the visits`,
        );
      }
      if (!gp.converged) warnings.push('the GP hyperparameter search did not converge');
      if (gp.lengthAtBound)
        warnings.push(`the GP length scale ended at a bound (${gp.lengthDays.toPrecision(3)} d)`);
      if (points.length > 300)
        warnings.push(`GP smoothing of ${points.length} points: time grows as N³`);
      entry.gp = {
        amplitude_dm: gp.amplitude,
        length_days: gp.lengthDays,
        white_dm: gp.white,
        mean_dm: gp.mean,
        log_likelihood: gp.logLikelihood,
        converged: gp.converged,
        usable: !flat && !whiteHeavy,
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
    // one by one: a spread of 10⁵ points would overflow the call stack
    for (const p of points) out.points.push(p);
  }
  return out;
}
