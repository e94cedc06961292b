import { useQuery } from '@tanstack/react-query';
import { api } from './client';

export interface ActivityItem {
  id: number;
  action: string;
  actor: string | null;
  run_id: string | null;
  pulsar: string | null;
  kind: string | null;
  created_at: string;
}

export function useActivity(limit = 20) {
  return useQuery({
    queryKey: ['activity', limit],
    queryFn: ({ signal }) =>
      api<{ items: ActivityItem[] }>('GET', `/api/activity?limit=${limit}`, undefined, signal),
    refetchInterval: 60_000,
  });
}
