import { z } from 'zod';
import { CONSTANT_NAMES } from '../physics/constants.js';

/** The analyses `sightline batch` runs: the same run functions as the single commands. */
export const BATCH_ANALYSES = [
  'dm-fit',
  'dm-series',
  'toas-correct',
  'scatter-fit',
  'scint',
  'dm-refine',
] as const;
export type BatchAnalysis = (typeof BATCH_ANALYSES)[number];

const positive = z.number().positive();
const nonNegative = z.number().nonnegative();
const finite = z.number();
const path = z.string().min(1);
const constant = z.enum(CONSTANT_NAMES as [string, ...string[]]);

/** Options of `dm fit`, camelCase as the run function takes them (defaults as the command's). */
const fitShape = {
  gap: positive.optional(),
  window: positive.optional(),
  windowStart: nonNegative.optional(),
  periodS: positive.optional(),
  clip: positive.optional(),
  evolution: z.number().int().min(0).max(5).default(0),
  scatter: z.enum(['none', 'fixed', 'free']).default('none'),
  alpha: positive.optional(),
  refFreq: positive.default(1000),
  constant: constant.optional(),
};

export const dmFitJobOptionsSchema = z.strictObject({
  ...fitShape,
  strict: z.boolean().optional(),
});

export const dmSeriesJobOptionsSchema = z.strictObject({
  ...fitShape,
  smooth: z.enum(['none', 'gp']).default('none'),
  solar: nonNegative.optional(),
  ra: finite.optional(),
  dec: finite.optional(),
  /** a file: relative to the manifest's folder */
  positions: path.optional(),
  refDm: finite.optional(),
});

/** Options of `toas correct`: the series is a file, often another job's result ("{out}/{stem}.dm-series.json"). */
export const toasCorrectJobOptionsSchema = z.strictObject({
  series: path,
  use: z.enum(['auto', 'smooth', 'points']).default('auto'),
  extrapolate: z.boolean().optional(),
});

export const scatterFitJobOptionsSchema = z.strictObject({
  model: z.enum(['gauss', 'gauss2', 'gauss3', 'template']).default('gauss'),
  template: path.optional(),
  meta: path.optional(),
  alpha: z.union([z.literal('free'), positive]).default('free'),
  refFreq: positive.default(1000),
  dm: positive.optional(),
});

export const scintJobOptionsSchema = z.strictObject({
  meta: path.optional(),
  rfiFence: positive.default(1.5),
  pixelSigma: positive.default(5),
  c1: positive.default(1.16),
  mask: path.optional(),
  tails: path.optional(),
});

/** Trial DMs: "LO:HI:STEP" as on the command line, or { lo, hi, step }. */
const rangeSchema = z
  .union([
    z.string().transform((text, ctx) => {
      const parts = text.split(':').map((p) => (p.trim() === '' ? NaN : Number(p)));
      if (parts.length !== 3 || parts.some((v) => !Number.isFinite(v))) {
        ctx.addIssue({
          code: 'custom',
          message: `"${text}" is not LO:HI:STEP (for example 21.30:21.42:0.0005)`,
        });
        return z.NEVER;
      }
      return { lo: parts[0], hi: parts[1], step: parts[2] };
    }),
    z.strictObject({ lo: finite, hi: finite, step: finite }),
  ])
  .superRefine((r, ctx) => {
    if (!(r.step > 0)) ctx.addIssue({ code: 'custom', message: 'STEP must be positive' });
    else if (!(r.hi >= r.lo)) ctx.addIssue({ code: 'custom', message: 'HI is below LO' });
  });

export const dmRefineJobOptionsSchema = z.strictObject({
  range: rangeSchema,
  meta: path.optional(),
  template: path.optional(),
  minSnr: positive.optional(),
  constant: constant.optional(),
});

/**
 * Option keys that name files (resolved against the manifest's folder). They may hold the
 * placeholders {out} (the results folder) and {stem} (the job's input file name without its
 * extension), so a job can read another job's result; that job then runs first.
 */
export const PATH_OPTIONS = ['positions', 'template', 'meta', 'mask', 'tails', 'series'] as const;

/** The placeholders a file option may hold. */
export const PATH_PLACEHOLDERS = ['out', 'stem'] as const;

/** A job's name becomes a file name: no folders, no leading dot. */
const jobName = z
  .string()
  .regex(
    /^[A-Za-z0-9][A-Za-z0-9._+-]*$/,
    'letters, digits and . _ + - only, starting with a letter or digit',
  );

const job = <A extends BatchAnalysis, S extends z.ZodType>(analysis: A, options: S) =>
  z.strictObject({
    name: jobName.optional(),
    analysis: z.literal(analysis),
    /** a file or a glob, relative to the manifest's folder */
    input: z.string().min(1),
    /** files or globs (relative to the manifest's folder) left out of a glob input */
    exclude: z.union([z.string().min(1), z.array(z.string().min(1)).min(1)]).optional(),
    // no options: the command's defaults (a missing object parses as an empty one)
    options: z.preprocess((v) => v ?? {}, options),
  });

export const batchJobSchema = z.discriminatedUnion('analysis', [
  job('dm-fit', dmFitJobOptionsSchema),
  job('dm-series', dmSeriesJobOptionsSchema),
  job('toas-correct', toasCorrectJobOptionsSchema),
  job('scatter-fit', scatterFitJobOptionsSchema),
  job('scint', scintJobOptionsSchema),
  job('dm-refine', dmRefineJobOptionsSchema),
]);
export type BatchJob = z.infer<typeof batchJobSchema>;

/** `sightline batch MANIFEST` (JSON or YAML). */
export const batchManifestSchema = z.strictObject({
  /** where results go, relative to the manifest's folder (default "results") */
  out: z.string().min(1).optional(),
  jobs: z.array(batchJobSchema).min(1),
});
export type BatchManifest = z.infer<typeof batchManifestSchema>;

/** One line of `sightline batch` stdout per finished job. */
export const batchLineSchema = z.strictObject({
  job: z.string(),
  analysis: z.enum(BATCH_ANALYSES),
  input: z.string(),
  status: z.enum(['done', 'skipped', 'failed']),
  out: z.string().optional(),
  error: z.string().optional(),
  seconds: nonNegative,
  /** with --push: the run the result became, or true when the push is pending */
  run_id: z.string().optional(),
  pending: z.literal(true).optional(),
  /** with --push: run_id is the run an earlier push of this very result made (nothing sent) */
  already_pushed: z.literal(true).optional(),
});
export type BatchLine = z.infer<typeof batchLineSchema>;

/** OUT/.batch/<result file>: what a result was made from, to skip it when nothing changed. */
export const batchSidecarSchema = z.object({
  schema: z.literal('sightline/batch-job@1'),
  analysis: z.enum(BATCH_ANALYSES),
  input: z.string(),
  options: z.record(z.string(), z.unknown()),
  status: z.enum(['done', 'failed']),
  error: z.string().optional(),
  result_sha256: z.string(),
  /** every file read, with its SHA-256 then */
  inputs: z.array(z.object({ path: z.string(), sha256: z.string() })),
});
export type BatchSidecar = z.infer<typeof batchSidecarSchema>;

/** OUT/.pending/<result file>: a result whose push to the review server has still to happen. */
export const pendingPushSchema = z.object({
  schema: z.literal('sightline/pending-push@1'),
  /** the result file, relative to OUT */
  result: z.string(),
  error: z.string(),
  /** the server the push was meant for */
  server: z.string().optional(),
});
export type PendingPush = z.infer<typeof pendingPushSchema>;

/**
 * OUT/.pushed/<result file>: the runs a result became, per server, so neither a resumed
 * `batch --push` nor `runs push --pending` sends the same result to the same server twice.
 */
export const pushedRecordSchema = z.object({
  schema: z.literal('sightline/pushed@1'),
  result: z.string(),
  runs: z.array(
    z.object({
      server: z.string(),
      run_id: z.string(),
      /** the SHA-256 of the result file that was sent */
      result_sha256: z.string(),
    }),
  ),
});
export type PushedRecord = z.infer<typeof pushedRecordSchema>;
