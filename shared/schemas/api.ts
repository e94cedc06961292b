// Bodies and queries of the review server's HTTP API (interfaces.md "HTTP API"). The server
// validates with these; the CLI and the web app use the same shapes.
import { z } from 'zod';
import { comparableResultSchema } from './review.js';

export const ROLE_NAMES = ['viewer', 'analyst', 'lead', 'admin'] as const;
export const RUN_STATE_NAMES = [
  'draft',
  'in_review',
  'approved',
  'returned',
  'superseded',
] as const;
export const RUN_KINDS = ['dm-fit', 'dm-series', 'scatter-fit', 'scint'] as const;

/** A result a correction run can hold, told apart by its schema tag (same as a comparable one). */
export const runResultSchema = comparableResultSchema;

const text = (max: number) => z.string().trim().max(max);

export const createRunBody = z.object({
  result: runResultSchema,
  title: text(200).optional(),
  /** send straight to review (the creator's own submit) */
  submit: z.boolean().optional(),
});

export const submitRunBody = z.object({ version: z.number().int().positive().optional() });

export const reviewBody = z
  .object({
    decision: z.enum(['approve', 'return', 'comment']),
    comment: text(10_000).default(''),
    /** the run version the reviewer looked at; a stale one is refused with 409 */
    version: z.number().int().positive().optional(),
  })
  .superRefine((b, ctx) => {
    if (b.decision !== 'comment' && b.version === undefined)
      ctx.addIssue({
        code: 'custom',
        path: ['version'],
        message: 'approve and return need the run version you reviewed',
      });
    if (b.decision !== 'approve' && b.comment.length === 0)
      ctx.addIssue({ code: 'custom', path: ['comment'], message: 'say what needs to change' });
  });

const csvList = <T extends z.ZodType<unknown, string>>(item: T) =>
  z
    .union([z.string(), z.array(z.string())])
    .transform((v) => (Array.isArray(v) ? v : v.split(',')).map((s) => s.trim()).filter(Boolean))
    .pipe(z.array(item));

const dateQuery = z
  .string()
  .refine((s) => !Number.isNaN(Date.parse(s)), 'expected a date such as 2026-11-30')
  .transform((s) => new Date(s));

export const listRunsQuery = z.object({
  pulsar: csvList(z.string()).optional(),
  kind: csvList(z.enum(RUN_KINDS)).optional(),
  state: csvList(z.enum(RUN_STATE_NAMES)).optional(),
  /** e-mail or user id of the creator; "me" for the caller */
  creator: z.string().optional(),
  from: dateQuery.optional(),
  to: dateQuery.optional(),
  page: z.coerce.number().int().positive().default(1),
  page_size: z.coerce.number().int().min(1).max(200).default(50),
});

export const compareQuery = z.object({ a: z.uuid(), b: z.uuid() });

/**
 * What a robot token may do: `read` (every GET), `push` (create runs, upload, queue analyses,
 * submit and comment), `check` (baseline checks). Tokens never manage tokens or accounts.
 */
export const TOKEN_SCOPES = ['read', 'push', 'check'] as const;
export type TokenScope = (typeof TOKEN_SCOPES)[number];
/** Tokens always expire: 1 day to 2 years, a year by default. */
export const TOKEN_DAYS = { min: 1, max: 730, default: 365 } as const;

export const createTokenBody = z.object({
  name: text(64).min(1),
  /** admins may create a token for another user (a robot account) */
  user_id: z.string().min(1).optional(),
  /** default: all three */
  scopes: z
    .array(z.enum(TOKEN_SCOPES))
    .min(1, 'choose at least one scope')
    .refine((a) => new Set(a).size === a.length, 'each scope once')
    .optional(),
  /** default: 365 */
  expires_in_days: z.number().int().min(TOKEN_DAYS.min).max(TOKEN_DAYS.max).optional(),
});

export const createUserBody = z.object({
  email: z.email().max(254),
  name: text(120).min(1),
  role: z.enum(ROLE_NAMES),
  /** when absent a random password is generated and returned once */
  password: z.string().min(10).max(128).optional(),
});

export const updateUserBody = z
  .object({ role: z.enum(ROLE_NAMES).optional(), disabled: z.boolean().optional() })
  .refine((b) => b.role !== undefined || b.disabled !== undefined, 'nothing to change');

export const pulsarBody = z.object({
  name: text(64).min(1),
  ra_deg: z.number().min(0).lt(360).nullable().optional(),
  dec_deg: z.number().min(-90).max(90).nullable().optional(),
  period_s: z.number().positive().nullable().optional(),
  dm_ref: z.number().nonnegative().nullable().optional(),
  is_reference: z.boolean().optional(),
  notes: text(2000).nullable().optional(),
});
export const updatePulsarBody = pulsarBody.omit({ name: true }).partial();

export const listQuery = z.object({
  page: z.coerce.number().int().positive().default(1),
  page_size: z.coerce.number().int().min(1).max(500).default(100),
});

/** A receiver name in `GET /api/rfi/:receiver` (the `receiver` of a dynamic spectrum's sidecar). */
export const receiverParam = z.string().trim().min(1, 'name a receiver').max(64);

/**
 * `GET /api/rfi/:receiver`: the interference channels remembered for a receiver from its scint
 * runs, and the mask (`channels_mhz`) that `sightline scint analyse --mask-from-server` starts
 * from. The rule that makes a channel persistent is in shared/review/rfi-memory.ts.
 */
export const rfiMemorySchema = z.object({
  receiver: z.string(),
  /** the receiver's scint runs (every state) */
  runs: z.number().int().nonnegative(),
  /** the rule, in words */
  rule: z.string(),
  /** the remembered mask: persistent channels' frequencies, ascending */
  channels_mhz: z.array(z.number()),
  /** every channel any of these runs flagged, ascending in frequency */
  channels: z.array(
    z.object({
      freq_mhz: z.number(),
      /** runs that flagged it persistent (beyond the fences in both halves of the visit) */
      persistent_runs: z.number().int().nonnegative(),
      /** runs that flagged it from the data (persistent, intermittent or dead) */
      flagged_runs: z.number().int().nonnegative(),
      /** runs that were given it in a starting mask (these did not test it) */
      given_runs: z.number().int().nonnegative(),
      /** runs whose band holds it and that tested it (were not given it) */
      tested_runs: z.number().int().nonnegative(),
      /** persistent_runs / tested_runs (0 when no run tested it) */
      share: z.number().min(0).max(1),
      persistent: z.boolean(),
    }),
  ),
});
export type RfiMemory = z.infer<typeof rfiMemorySchema>;

export type CreateRunBody = z.infer<typeof createRunBody>;
export type ReviewBody = z.infer<typeof reviewBody>;
export type RunResultJson = z.infer<typeof runResultSchema>;
