import { useQueries, useQuery } from '@tanstack/react-query';
import type { CompareResult } from '../../../shared/schemas/review';
import { api, qs } from './client';
import type { RunDetail, RunSummaryView } from './types';

/** GET /api/compare: run B against run A, plus both runs' views. */
export type CompareView = CompareResult & { a: RunSummaryView; b: RunSummaryView };

export function useCompare(a: string | undefined, b: string | undefined) {
  return useQuery({
    queryKey: ['compare', a, b],
    queryFn: ({ signal }) =>
      api<CompareView>('GET', `/api/compare${qs({ a, b })}`, undefined, signal),
    enabled: !!a && !!b && a !== b,
    retry: false,
  });
}

/**
 * Several runs with their results at once (one request each, cached under the same key as
 * useRun so the run page reuses them).
 */
export function useRunDetails(ids: string[]) {
  return useQueries({
    queries: ids.map((id) => ({
      queryKey: ['run', id],
      queryFn: ({ signal }: { signal: AbortSignal }) =>
        api<RunDetail>('GET', `/api/runs/${id}`, undefined, signal),
      staleTime: 60_000,
    })),
    combine: (results) => ({
      data: results.map((r) => r.data).filter((d): d is RunDetail => d !== undefined),
      isPending: results.some((r) => r.isPending),
      errors: results.map((r) => r.error).filter((e): e is Error => e !== null),
    }),
  });
}
