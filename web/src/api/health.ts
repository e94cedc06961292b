import { useQuery } from '@tanstack/react-query';
import { z } from 'zod';
import { softwareSchema } from '../../../shared/schemas/common';
import { getJson } from './client';

// Belongs in shared/schemas/ (not editable from this change) so the server can use it too.
export const healthSchema = z.object({ status: z.literal('ok'), software: softwareSchema });
export type Health = z.infer<typeof healthSchema>;

/** Server liveness and version, re-checked every 30 s so the footer notices an outage. */
export function useHealth() {
  return useQuery({
    queryKey: ['health'],
    queryFn: ({ signal }) => getJson('/api/health', healthSchema, signal),
    refetchInterval: 30_000,
  });
}
