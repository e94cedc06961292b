import type { DmSeriesResult } from '../schemas/dm-series.js';
import { solarWindDmAt } from '../solar/solar-wind.js';

export interface DmAt {
  /** DM change to remove: DM(t) − reference (pc cm⁻³), solar wind included when modelled */
  ddm: number;
  /** the solar-wind part of ddm (0 when not modelled) */
  solar: number;
  /** true when t lies outside the series and the nearest end value was used */
  extrapolated: boolean;
}

/** Linear interpolation in sorted (x, y); holds the end values beyond the ends. */
function interpolate(xs: number[], ys: number[], x: number): number {
  const n = xs.length;
  if (x <= xs[0]) return ys[0];
  if (x >= xs[n - 1]) return ys[n - 1];
  let lo = 0;
  let hi = n - 1;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (xs[mid] <= x) lo = mid;
    else hi = mid;
  }
  const f = (x - xs[lo]) / (xs[hi] - xs[lo]);
  return ys[lo] + f * (ys[hi] - ys[lo]);
}

/**
 * DM(t) per source from a series: its smooth curve when present (or asked for), else linear
 * interpolation between fitted visits; the solar-wind model the series subtracted is added
 * back at each arrival time's own epoch, since its variation is faster than any visit grid.
 */
export function dmCurve(series: DmSeriesResult, use: 'smooth' | 'points' | 'auto' = 'auto') {
  const curves = new Map<
    string,
    {
      xs: number[];
      ys: number[];
      ref: number;
      first: number;
      last: number;
      ra?: number;
      dec?: number;
    }
  >();
  for (const s of series.sources) {
    const smooth = (series.smooth ?? []).filter((p) => p.source === s.source);
    // 'auto' takes the smooth curve only when the GP found correlated variation it trusts
    const useSmooth =
      use === 'smooth' || (use === 'auto' && smooth.length > 0 && s.gp?.usable !== false);
    if (use === 'smooth' && smooth.length === 0) {
      throw new RangeError(
        `the series has no smooth curve for ${s.source} (run dm series --smooth gp)`,
      );
    }
    const pts = useSmooth ? smooth : series.points.filter((p) => p.source === s.source);
    if (pts.length === 0) continue;
    curves.set(s.source, {
      xs: pts.map((p) => p.mjd),
      ys: pts.map((p) => p.dm),
      ref: s.reference_dm,
      // arrival times of the first and last visit are covered even though the points sit at
      // the visits' mean epochs
      first: s.mjd_first ?? pts[0].mjd,
      last: s.mjd_last ?? pts[pts.length - 1].mjd,
      ra: s.ra_deg,
      dec: s.dec_deg,
    });
  }
  const n0 = series.solar?.n0_cm3;
  return {
    sources: [...curves.keys()],
    at(source: string, mjd: number): DmAt | undefined {
      const c = curves.get(source);
      if (!c) return undefined;
      const y = interpolate(c.xs, c.ys, mjd);
      const outside = mjd < c.first - 1e-9 || mjd > c.last + 1e-9;
      let solar = 0;
      if (n0 !== undefined && c.ra !== undefined && c.dec !== undefined) {
        solar = solarWindDmAt(n0, c.ra, c.dec, mjd).dm;
      }
      return { ddm: y - c.ref + solar, solar, extrapolated: outside };
    },
  };
}
