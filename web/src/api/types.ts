// What the review server answers (server/services/runs.ts, server/routes/*.ts views).
import type { RunResultJson } from '../../../shared/schemas/api';

export type Role = 'viewer' | 'analyst' | 'lead' | 'admin';
export type RunState = 'draft' | 'in_review' | 'approved' | 'returned' | 'superseded';
export type RunKind = 'dm-fit' | 'dm-series' | 'scatter-fit' | 'scint';

export interface Me {
  id: string;
  email: string;
  name: string;
  role: Role;
  via: 'session' | 'token';
  permissions: string[];
}

export interface RunSummaryView {
  id: string;
  url: string;
  kind: RunKind;
  state: RunState;
  version: number;
  title: string | null;
  pulsar: string | null;
  is_reference: boolean;
  summary: Record<string, number | string | boolean | null | [number, number]>;
  parameters: Record<string, unknown>;
  input: { path: string; sha256: string; rows: number }[];
  software_version: string;
  constant: { name: string; value: number } | null;
  created_by: { id: string; email: string; name: string };
  upload_id: string | null;
  created_at: string;
  updated_at: string;
  submitted_at: string | null;
  decided_at: string | null;
}

export interface ReviewView {
  id: string;
  decision: 'approve' | 'return' | 'comment';
  comment: string;
  run_version: number;
  reviewer: { id: string; email: string; name: string };
  created_at: string;
}

export interface RunDetail extends RunSummaryView {
  baseline: { id: number; state: 'active' | 'superseded' } | null;
  reviews: ReviewView[];
  result: RunResultJson;
}

export interface Page<T> {
  items: T[];
  page: number;
  page_size: number;
  total: number;
}

export interface PulsarView {
  name: string;
  ra_deg: number | null;
  dec_deg: number | null;
  period_s: number | null;
  dm_ref: number | null;
  is_reference: boolean;
  notes: string | null;
}

export interface BaselineView {
  id: number;
  pulsar: string;
  kind: RunKind;
  run_id: string;
  state: 'active' | 'superseded';
  run_state: RunState;
  summary: RunSummaryView['summary'];
  software_version: string;
  set_by: string;
  set_at: string;
  superseded_at: string | null;
  last_check: {
    status: 'pass' | 'fail' | 'no_baseline';
    n_failed: number;
    worst_deviation_sigma: number | null;
    tolerance_sigma: number;
    software_version: string | null;
    checked_at: string;
  } | null;
}

export interface AuditView {
  id: number;
  actor: { id: string; email: string | null } | null;
  action: string;
  target_type: string;
  target_id: string | null;
  before: unknown;
  after: unknown;
  request_id: string | null;
  created_at: string;
}
