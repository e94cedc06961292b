import { keepPreviousData, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, qs } from './client';
import type { BaselineView, Page, PulsarView, RunDetail, RunSummaryView } from './types';

export interface RunFilters {
  pulsar?: string;
  kind?: string;
  state?: string;
  creator?: string;
  from?: string;
  to?: string;
  page?: number;
  page_size?: number;
}

export function useRuns(f: RunFilters, enabled = true) {
  return useQuery({
    queryKey: ['runs', f],
    queryFn: ({ signal }) =>
      api<Page<RunSummaryView>>('GET', `/api/runs${qs({ ...f })}`, undefined, signal),
    placeholderData: keepPreviousData,
    enabled,
  });
}

export function useRun(id: string | undefined) {
  return useQuery({
    queryKey: ['run', id],
    queryFn: ({ signal }) => api<RunDetail>('GET', `/api/runs/${id}`, undefined, signal),
    enabled: !!id,
  });
}

/** After any change to a run: the run itself, lists, baselines and the overview refresh. */
function useRunChanged() {
  const qc = useQueryClient();
  return (id: string) =>
    Promise.all([
      qc.invalidateQueries({ queryKey: ['run', id] }),
      qc.invalidateQueries({ queryKey: ['runs'] }),
      qc.invalidateQueries({ queryKey: ['baselines'] }),
    ]);
}

export function useSubmitRun(id: string) {
  const changed = useRunChanged();
  return useMutation({
    mutationFn: (version: number) =>
      api<RunSummaryView>('POST', `/api/runs/${id}/submit`, { version }),
    onSuccess: () => changed(id),
  });
}

export function useReviewRun(id: string) {
  const changed = useRunChanged();
  return useMutation({
    mutationFn: (b: {
      decision: 'approve' | 'return' | 'comment';
      comment: string;
      version?: number;
    }) => api('POST', `/api/runs/${id}/reviews`, b),
    onSettled: () => changed(id),
  });
}

export function useBaselines(all = false) {
  return useQuery({
    queryKey: ['baselines', all],
    queryFn: ({ signal }) =>
      api<{ items: BaselineView[] }>(
        'GET',
        `/api/baselines${all ? '?all=1' : ''}`,
        undefined,
        signal,
      ),
  });
}

export function usePulsars() {
  return useQuery({
    queryKey: ['pulsars'],
    queryFn: ({ signal }) => api<{ items: PulsarView[] }>('GET', '/api/pulsars', undefined, signal),
    staleTime: 300_000,
  });
}
