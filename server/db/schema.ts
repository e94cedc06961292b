// The review server's tables (Drizzle). Migrations are generated from this file into drizzle/
// with `npx drizzle-kit generate`. The first five tables are the ones better-auth (with its admin
// and api-key plugins) reads and writes; their column names follow that package's model.
import { sql } from 'drizzle-orm';
import {
  bigserial,
  boolean,
  doublePrecision,
  index,
  integer,
  jsonb,
  pgTable,
  serial,
  text,
  timestamp,
  uniqueIndex,
  uuid,
} from 'drizzle-orm/pg-core';

const ts = (name: string) => timestamp(name, { withTimezone: true, mode: 'date' });
const created = () => ts('created_at').notNull().defaultNow();

// ── sign-in (better-auth) ───────────────────────────────────────────────────────────────────────

export const user = pgTable('user', {
  id: text('id').primaryKey(),
  name: text('name').notNull(),
  email: text('email').notNull().unique(),
  emailVerified: boolean('email_verified').notNull().default(false),
  image: text('image'),
  createdAt: created(),
  updatedAt: ts('updated_at').notNull().defaultNow(),
  /** viewer | analyst | lead | admin */
  role: text('role').notNull().default('viewer'),
  banned: boolean('banned').default(false),
  banReason: text('ban_reason'),
  banExpires: ts('ban_expires'),
});

export const session = pgTable(
  'session',
  {
    id: text('id').primaryKey(),
    expiresAt: ts('expires_at').notNull(),
    token: text('token').notNull().unique(),
    createdAt: created(),
    updatedAt: ts('updated_at').notNull().defaultNow(),
    ipAddress: text('ip_address'),
    userAgent: text('user_agent'),
    userId: text('user_id')
      .notNull()
      .references(() => user.id, { onDelete: 'cascade' }),
    impersonatedBy: text('impersonated_by'),
  },
  (t) => [index('session_user_idx').on(t.userId)],
);

export const account = pgTable(
  'account',
  {
    id: text('id').primaryKey(),
    accountId: text('account_id').notNull(),
    providerId: text('provider_id').notNull(),
    userId: text('user_id')
      .notNull()
      .references(() => user.id, { onDelete: 'cascade' }),
    accessToken: text('access_token'),
    refreshToken: text('refresh_token'),
    idToken: text('id_token'),
    accessTokenExpiresAt: ts('access_token_expires_at'),
    refreshTokenExpiresAt: ts('refresh_token_expires_at'),
    scope: text('scope'),
    password: text('password'),
    createdAt: created(),
    updatedAt: ts('updated_at').notNull().defaultNow(),
  },
  (t) => [index('account_user_idx').on(t.userId)],
);

export const verification = pgTable('verification', {
  id: text('id').primaryKey(),
  identifier: text('identifier').notNull(),
  value: text('value').notNull(),
  expiresAt: ts('expires_at').notNull(),
  createdAt: created(),
  updatedAt: ts('updated_at').notNull().defaultNow(),
});

/** API tokens for robots (CLI, CI). Only a hash of the key is stored (better-auth api-key). */
export const apikey = pgTable(
  'apikey',
  {
    id: text('id').primaryKey(),
    configId: text('config_id').notNull().default('default'),
    name: text('name'),
    start: text('start'),
    referenceId: text('reference_id')
      .notNull()
      .references(() => user.id, { onDelete: 'cascade' }),
    prefix: text('prefix'),
    key: text('key').notNull(),
    refillInterval: integer('refill_interval'),
    refillAmount: integer('refill_amount'),
    lastRefillAt: ts('last_refill_at'),
    enabled: boolean('enabled').default(true),
    rateLimitEnabled: boolean('rate_limit_enabled').default(true),
    rateLimitTimeWindow: integer('rate_limit_time_window'),
    rateLimitMax: integer('rate_limit_max'),
    requestCount: integer('request_count').default(0),
    remaining: integer('remaining'),
    lastRequest: ts('last_request'),
    expiresAt: ts('expires_at'),
    createdAt: created(),
    updatedAt: ts('updated_at').notNull().defaultNow(),
    permissions: text('permissions'),
    metadata: text('metadata'),
  },
  (t) => [
    index('apikey_key_idx').on(t.key),
    index('apikey_reference_idx').on(t.referenceId),
    index('apikey_config_idx').on(t.configId),
  ],
);

// ── the review app ──────────────────────────────────────────────────────────────────────────────

export const pulsars = pgTable('pulsars', {
  id: serial('id').primaryKey(),
  name: text('name').notNull().unique(),
  raDeg: doublePrecision('ra_deg'),
  decDeg: doublePrecision('dec_deg'),
  periodS: doublePrecision('period_s'),
  dmRef: doublePrecision('dm_ref'),
  isReference: boolean('is_reference').notNull().default(false),
  notes: text('notes'),
  createdAt: created(),
});

export const uploads = pgTable(
  'uploads',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    fileName: text('file_name').notNull(),
    sizeBytes: integer('size_bytes').notNull(),
    sha256: text('sha256').notNull(),
    /** toas | profiles | profiles-npy | dynspec | result */
    kind: text('kind').notNull(),
    /** relative to the data directory: uploads/<sha256> */
    storagePath: text('storage_path').notNull(),
    uploadedBy: text('uploaded_by')
      .notNull()
      .references(() => user.id),
    createdAt: created(),
  },
  (t) => [index('uploads_sha_idx').on(t.sha256)],
);

export const runs = pgTable(
  'runs',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    pulsarId: integer('pulsar_id').references(() => pulsars.id),
    /** dm-fit | dm-series | scatter-fit | … (the result schema's kind) */
    kind: text('kind').notNull(),
    /** draft | in_review | approved | returned | superseded */
    state: text('state').notNull().default('draft'),
    /** optimistic concurrency: every state change increments it */
    version: integer('version').notNull().default(1),
    title: text('title'),
    parameters: jsonb('parameters').notNull().default({}),
    summary: jsonb('summary').notNull().default({}),
    result: jsonb('result').notNull(),
    inputChecksums: jsonb('input_checksums').notNull().default([]),
    softwareVersion: text('software_version').notNull(),
    constantName: text('constant_name'),
    constantValue: doublePrecision('constant_value'),
    uploadId: uuid('upload_id').references(() => uploads.id),
    createdBy: text('created_by')
      .notNull()
      .references(() => user.id),
    createdAt: created(),
    updatedAt: ts('updated_at').notNull().defaultNow(),
    submittedAt: ts('submitted_at'),
    decidedAt: ts('decided_at'),
  },
  (t) => [
    index('runs_pulsar_kind_idx').on(t.pulsarId, t.kind),
    index('runs_state_idx').on(t.state),
    index('runs_created_idx').on(t.createdAt),
  ],
);

export const reviews = pgTable(
  'reviews',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    runId: uuid('run_id')
      .notNull()
      .references(() => runs.id, { onDelete: 'cascade' }),
    /** approve | return | comment */
    decision: text('decision').notNull(),
    comment: text('comment').notNull().default(''),
    reviewerId: text('reviewer_id')
      .notNull()
      .references(() => user.id),
    runVersion: integer('run_version').notNull(),
    createdAt: created(),
  },
  (t) => [index('reviews_run_idx').on(t.runId)],
);

/** Approved run per reference pulsar × analysis kind; earlier ones are kept, superseded. */
export const baselines = pgTable(
  'baselines',
  {
    id: serial('id').primaryKey(),
    pulsarId: integer('pulsar_id')
      .notNull()
      .references(() => pulsars.id),
    kind: text('kind').notNull(),
    runId: uuid('run_id')
      .notNull()
      .references(() => runs.id),
    /** active | superseded */
    state: text('state').notNull().default('active'),
    setBy: text('set_by')
      .notNull()
      .references(() => user.id),
    createdAt: created(),
    supersededAt: ts('superseded_at'),
  },
  (t) => [
    uniqueIndex('baselines_active_idx')
      .on(t.pulsarId, t.kind)
      .where(sql`${t.state} = 'active'`),
  ],
);

export const audit = pgTable(
  'audit',
  {
    id: bigserial('id', { mode: 'number' }).primaryKey(),
    actorId: text('actor_id'),
    actorEmail: text('actor_email'),
    /** e.g. run.create, run.submit, run.approve, user.role, token.create, auth.sign_in */
    action: text('action').notNull(),
    targetType: text('target_type').notNull(),
    targetId: text('target_id'),
    before: jsonb('before'),
    after: jsonb('after'),
    requestId: text('request_id'),
    createdAt: created(),
  },
  (t) => [index('audit_created_idx').on(t.createdAt), index('audit_target_idx').on(t.targetId)],
);

/** Outgoing e-mail: queued in the same transaction as the change it announces. */
export const mail = pgTable(
  'mail',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    toAddress: text('to_address').notNull(),
    subject: text('subject').notNull(),
    body: text('body').notNull(),
    /** queued | sent | failed */
    status: text('status').notNull().default('queued'),
    attempts: integer('attempts').notNull().default(0),
    messageId: text('message_id'),
    error: text('error'),
    /** the message as the development SMTP catcher received it */
    captured: text('captured'),
    createdAt: created(),
    sentAt: ts('sent_at'),
  },
  (t) => [index('mail_status_idx').on(t.status)],
);

/** Server-side analyses on uploads, run in the worker pool. */
export const jobs = pgTable(
  'jobs',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    kind: text('kind').notNull(),
    uploadId: uuid('upload_id')
      .notNull()
      .references(() => uploads.id),
    params: jsonb('params').notNull().default({}),
    /** queued | running | done | failed */
    state: text('state').notNull().default('queued'),
    runId: uuid('run_id').references(() => runs.id),
    error: jsonb('error'),
    createdBy: text('created_by')
      .notNull()
      .references(() => user.id),
    createdAt: created(),
    startedAt: ts('started_at'),
    finishedAt: ts('finished_at'),
    /** times a worker took the job up (1 unless a worker died running it) */
    attempts: integer('attempts').notNull().default(0),
    /** the worker that last took it up: "<host>:<pid>" or its --name */
    worker: text('worker'),
  },
  (t) => [index('jobs_state_idx').on(t.state)],
);

/** Every baseline check (CI after a pipeline change): its verdict per pulsar and kind. */
export const baselineChecks = pgTable(
  'baseline_checks',
  {
    id: bigserial('id', { mode: 'number' }).primaryKey(),
    pulsarName: text('pulsar_name').notNull(),
    kind: text('kind').notNull(),
    /** pass | fail | no_baseline */
    status: text('status').notNull(),
    baselineRunId: uuid('baseline_run_id'),
    nFailed: integer('n_failed').notNull(),
    worstDeviationSigma: doublePrecision('worst_deviation_sigma'),
    toleranceSigma: doublePrecision('tolerance_sigma').notNull(),
    softwareVersion: text('software_version'),
    checkedBy: text('checked_by').references(() => user.id),
    createdAt: created(),
  },
  (t) => [index('baseline_checks_pulsar_idx').on(t.pulsarName, t.kind, t.createdAt)],
);

/**
 * Interference channels flagged by scint runs, per receiver: one row per flagged channel of each
 * scint run whose dynamic spectrum names its receiver (written with the run). `GET /api/rfi/:receiver`
 * turns them into the receiver's remembered mask (shared/review/rfi-memory.ts).
 */
export const rfiChannels = pgTable(
  'rfi_channels',
  {
    id: bigserial('id', { mode: 'number' }).primaryKey(),
    runId: uuid('run_id')
      .notNull()
      .references(() => runs.id, { onDelete: 'cascade' }),
    receiver: text('receiver').notNull(),
    /** the channel's index in its dynamic spectrum and its centre frequency */
    channel: integer('channel').notNull(),
    freqMhz: doublePrecision('freq_mhz').notNull(),
    /** the run's channel width (channels of different runs match within half of it) */
    channelMhz: doublePrecision('channel_mhz').notNull(),
    /** persistent | intermittent | dead | given */
    kind: text('kind').notNull(),
    createdAt: created(),
  },
  (t) => [
    index('rfi_channels_receiver_idx').on(t.receiver),
    index('rfi_channels_run_idx').on(t.runId),
  ],
);

export const ROLES = ['viewer', 'analyst', 'lead', 'admin'] as const;
export type Role = (typeof ROLES)[number];
export const RUN_STATES = ['draft', 'in_review', 'approved', 'returned', 'superseded'] as const;
export type RunState = (typeof RUN_STATES)[number];
