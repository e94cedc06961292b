import { useQuery } from '@tanstack/react-query';
import type { ScatterFitResult } from '../../../shared/schemas/scatter-fit';
import { api, qs } from './client';
import type { Page, RunDetail, RunState, RunSummaryView } from './types';

/** A profile scattering fit of the same visit as a scintillation run. */
export interface SameVisitScatter {
  run: RunDetail;
  result: ScatterFitResult;
  /** how many scattering fits of this pulsar lie within the window */
  candidates: number;
  /** |MJD difference| to the scintillation run's visit, days */
  offsetDays: number;
}

/** Visits closer than this are the same visit. */
export const SAME_VISIT_DAYS = 1;

/** Which fit to show when several fall within a day: the reviewed ones first. */
const STATE_RANK: Record<RunState, number> = {
  approved: 0,
  in_review: 1,
  draft: 2,
  returned: 3,
  superseded: 4,
};

const PAGE_SIZE = 200;
const MAX_PAGES = 10;

/**
 * The pulsar's `scatter-fit` runs whose visit lies within a day of `mjd`: the best of them
 * (approved first, then the nearest visit, then the newest run) with its full result, or null.
 */
export function useSameVisitScatter(pulsar: string | null, mjd: string | null, enabled = true) {
  return useQuery({
    queryKey: ['same-visit-scatter', pulsar, mjd],
    enabled: enabled && !!pulsar && !!mjd && Number.isFinite(Number(mjd)),
    queryFn: async ({ signal }): Promise<SameVisitScatter | null> => {
      const at = Number(mjd);
      const near: { run: RunSummaryView; offset: number }[] = [];
      for (let page = 1; page <= MAX_PAGES; page++) {
        const p = await api<Page<RunSummaryView>>(
          'GET',
          `/api/runs${qs({ pulsar, kind: 'scatter-fit', page, page_size: PAGE_SIZE })}`,
          undefined,
          signal,
        );
        for (const run of p.items) {
          const m = Number(run.summary.mjd);
          if (typeof run.summary.mjd === 'string' && Math.abs(m - at) <= SAME_VISIT_DAYS)
            near.push({ run, offset: Math.abs(m - at) });
        }
        if (page * p.page_size >= p.total || p.items.length === 0) break;
      }
      if (!near.length) return null;
      near.sort(
        (a, b) =>
          STATE_RANK[a.run.state] - STATE_RANK[b.run.state] ||
          a.offset - b.offset ||
          b.run.created_at.localeCompare(a.run.created_at),
      );
      const best = near[0];
      const run = await api<RunDetail>(
        'GET',
        `/api/runs/${encodeURIComponent(best.run.id)}`,
        undefined,
        signal,
      );
      return {
        run,
        result: run.result as ScatterFitResult,
        candidates: near.length,
        offsetDays: best.offset,
      };
    },
  });
}
