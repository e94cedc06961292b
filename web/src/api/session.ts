import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, ApiError } from './client';
import type { Me, Role } from './types';

/** The signed-in person, or null when nobody is. */
export function useSession() {
  return useQuery({
    queryKey: ['me'],
    queryFn: async ({ signal }) => {
      try {
        return await api<Me>('GET', '/api/me', undefined, signal);
      } catch (e) {
        if (e instanceof ApiError && e.status === 401) return null;
        throw e;
      }
    },
    staleTime: 60_000,
    retry: false,
  });
}

export function useSignIn() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (b: { email: string; password: string }) =>
      api('POST', '/api/auth/sign-in/email', b),
    onSuccess: async () => {
      qc.clear();
      await qc.invalidateQueries({ queryKey: ['me'] });
    },
  });
}

export function useSignOut() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: () => api('POST', '/api/auth/sign-out', {}),
    onSettled: () => {
      qc.clear();
      qc.setQueryData(['me'], null);
    },
  });
}

const RANK: Record<Role, number> = { viewer: 0, analyst: 1, lead: 2, admin: 3 };
/** analyst, lead, admin: push, upload, comment, submit own runs */
export const canContribute = (me: Me | null | undefined) => !!me && RANK[me.role] >= 1;
/** approve or return (never one's own run: the run page checks that too) */
export const canReview = (me: Me | null | undefined) => me?.role === 'lead';
export const isAdmin = (me: Me | null | undefined) => me?.role === 'admin';
