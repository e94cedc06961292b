// Minimal visit records for the comparison and regression tests: only the fields those read.
import type { DmFitLike, VisitLike } from '../../shared/review/compare.js';

export function visit(
  source: string,
  mjd: number,
  dm: number | null,
  err: number | null,
  extra = {},
): VisitLike {
  return {
    source,
    mjd,
    status: dm === null ? 'unconstrained' : 'fitted',
    dm,
    dm_err: err,
    dm_err_scaled: err,
    dm_kind: 'absolute',
    ...extra,
  };
}

export const dmFit = (visits: VisitLike[]): DmFitLike => ({
  schema: 'sightline/dm-fit@1',
  visits,
});
