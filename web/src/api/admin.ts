import { keepPreviousData, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import type { z } from 'zod';
import type { createUserBody } from '../../../shared/schemas/api';
import { api, qs } from './client';
import type { AuditView, Role } from './types';

// Users, API tokens, the audit log and outgoing mail (server/routes/people.ts).

export interface UserView {
  id: string;
  email: string;
  name: string;
  role: Role;
  disabled: boolean;
  created_at: string;
}

export interface TokenView {
  id: string;
  name: string;
  /** the first characters of the token, to recognise it */
  start: string | null;
  user_id: string;
  enabled: boolean;
  last_used_at: string | null;
  expires_at: string | null;
  /** what it may do: read, push, check */
  scopes: string[];
  created_at: string;
}

export interface MailView {
  id: string;
  to: string;
  subject: string;
  body: string;
  status: string;
  attempts: number;
  error: string | null;
  captured: boolean;
  created_at: string;
  sent_at: string | null;
}

export type CreateUserInput = z.input<typeof createUserBody>;

export function useUsers(enabled = true) {
  return useQuery({
    queryKey: ['users'],
    queryFn: ({ signal }) => api<{ items: UserView[] }>('GET', '/api/users', undefined, signal),
    enabled,
  });
}

export function useCreateUser() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (b: CreateUserInput) =>
      api<UserView & { initial_password?: string }>('POST', '/api/users', b),
    onSuccess: () => qc.invalidateQueries({ queryKey: ['users'] }),
  });
}

export function useUpdateUser() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: ({ id, ...b }: { id: string; role?: Role; disabled?: boolean }) =>
      api<UserView>('PATCH', `/api/users/${encodeURIComponent(id)}`, b),
    onSettled: () =>
      Promise.all([
        qc.invalidateQueries({ queryKey: ['users'] }),
        qc.invalidateQueries({ queryKey: ['audit'] }),
      ]),
  });
}

/** Own tokens, or (admins, `all`) everyone's. */
export function useTokens(all: boolean) {
  return useQuery({
    queryKey: ['tokens', all],
    queryFn: ({ signal }) =>
      api<{ items: TokenView[] }>('GET', `/api/tokens${all ? '?user=all' : ''}`, undefined, signal),
  });
}

export function useCreateToken() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (b: { name: string; user_id?: string }) =>
      api<TokenView & { token: string }>('POST', '/api/tokens', b),
    onSuccess: () =>
      Promise.all([
        qc.invalidateQueries({ queryKey: ['tokens'] }),
        qc.invalidateQueries({ queryKey: ['audit'] }),
      ]),
  });
}

export function useRevokeToken() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (id: string) => api<void>('DELETE', `/api/tokens/${encodeURIComponent(id)}`),
    onSettled: () =>
      Promise.all([
        qc.invalidateQueries({ queryKey: ['tokens'] }),
        qc.invalidateQueries({ queryKey: ['audit'] }),
      ]),
  });
}

export interface AuditFilters {
  page: number;
  page_size: number;
  action?: string;
}

export function useAudit(f: AuditFilters) {
  return useQuery({
    queryKey: ['audit', f],
    queryFn: ({ signal }) =>
      api<{ items: AuditView[]; total: number; page: number; page_size: number }>(
        'GET',
        `/api/audit${qs({ ...f })}`,
        undefined,
        signal,
      ),
    placeholderData: keepPreviousData,
  });
}

export function useMail() {
  return useQuery({
    queryKey: ['mail'],
    queryFn: ({ signal }) =>
      api<{ target: string; items: MailView[] }>(
        'GET',
        '/api/mail?page_size=100',
        undefined,
        signal,
      ),
    refetchInterval: 30_000,
  });
}
