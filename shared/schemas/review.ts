import { z } from 'zod';
import { dmFitResultSchema } from './dm-fit.js';
import { dmSeriesResultSchema } from './dm-series.js';
import { scatterFitResultSchema } from './scatter-fit.js';
import { scintResultSchema } from './scint.js';

/** The result kinds that can be compared run against run and checked against a baseline. */
export const COMPARABLE_KINDS = ['dm-fit', 'dm-series', 'scatter-fit', 'scint'] as const;
export const comparableKindSchema = z.enum(COMPARABLE_KINDS);
export type ComparableKind = z.infer<typeof comparableKindSchema>;

/**
 * Quantities compared: DM per visit or point, τ at the reference frequency (a chromatic fit's,
 * a power law's, or τ from the scintle bandwidth at the band centre), τ per band, α, and a
 * visit's decorrelation bandwidth and scintillation time.
 */
export const comparedQuantitySchema = z.enum([
  'dm',
  'tau_ref_us',
  'tau_us',
  'alpha',
  'dnu_d_mhz',
  'dt_d_s',
]);
export type ComparedQuantity = z.infer<typeof comparedQuantitySchema>;

/** Any result JSON that compare and baseline check accept, told apart by its schema tag. */
export const comparableResultSchema = z.discriminatedUnion('schema', [
  dmFitResultSchema,
  dmSeriesResultSchema,
  scatterFitResultSchema,
  scintResultSchema,
]);
export type ComparableResultJson = z.infer<typeof comparableResultSchema>;

const num = z.number();

// ---- compare two runs (sightline/compare@1) ---------------------------------------------------

export const compareItemSchema = z.object({
  /** stable label of the matched visit, point, band or power law ("SBP-B MJD 60214.3") */
  key: z.string(),
  source: z.string(),
  /** visit epoch (run A's), for dm-fit, dm-series and scint items */
  mjd: num.optional(),
  /** band centre (run A's), for scatter-fit band items */
  freq_mhz: num.optional(),
  quantity: comparedQuantitySchema,
  a: num,
  a_err: num.nonnegative(),
  b: num,
  b_err: num.nonnegative(),
  /** b − a */
  delta: num,
  /** √(a_err² + b_err²): the two quoted errors in quadrature, as if independent */
  sigma: num.nonnegative(),
  /** delta / sigma; null when sigma is 0 (both errors zero) */
  z: num.nullable(),
});
export type CompareItem = z.infer<typeof compareItemSchema>;

export const movedItemSchema = z.object({
  key: z.string(),
  quantity: comparedQuantitySchema,
  delta: num,
  z: num,
  /** e.g. "SBP-B MJD 60214.3: DM moved +2.1σ (+0.00031)" */
  text: z.string(),
});
export type MovedItem = z.infer<typeof movedItemSchema>;

export const compareResultSchema = z.object({
  schema: z.literal('sightline/compare@1'),
  kind: comparableKindSchema,
  /** labels of visits / points / bands (and the power law) only run A has */
  a_only: z.array(z.string()),
  b_only: z.array(z.string()),
  /** matched in both runs but not compared, with the reason ("…: unconstrained in B") */
  not_compared: z.array(z.string()),
  items: z.array(compareItemSchema),
  summary: z.object({
    n_matched: z.number().int().nonnegative(),
    n_a_only: z.number().int().nonnegative(),
    n_b_only: z.number().int().nonnegative(),
    /** over items with a finite z; null when there are none */
    max_abs_z: num.nonnegative().nullable(),
    rms_z: num.nonnegative().nullable(),
    n_over_3sigma: z.number().int().nonnegative(),
    /** up to 10 items with the largest |z|, largest first */
    moved: z.array(movedItemSchema),
  }),
});
export type CompareResult = z.infer<typeof compareResultSchema>;

// ---- regression check against a baseline (sightline/baseline-check@1) -----------------------

export const regressionItemSchema = z.object({
  source: z.string(),
  kind: comparableKindSchema,
  key: z.string(),
  /** a compared quantity, or 'presence' (missing / new) or 'status' (fitted in one only) */
  quantity: z.union([comparedQuantitySchema, z.enum(['presence', 'status'])]),
  baseline: num.nullable(),
  value: num.nullable(),
  /** the baseline's own quoted 1σ error */
  sigma: num.nonnegative().nullable(),
  /** (value − baseline) / sigma; null when there is nothing to divide */
  deviation_sigma: num.nullable(),
  pass: z.boolean(),
  /** why an item failed or is informational: 'missing', 'new', 'not fitted: …', … */
  reason: z.string().optional(),
});
export type RegressionItem = z.infer<typeof regressionItemSchema>;

export const regressionResultSchema = z.object({
  pass: z.boolean(),
  n_items: z.number().int().nonnegative(),
  n_failed: z.number().int().nonnegative(),
  items: z.array(regressionItemSchema),
});
export type RegressionResult = z.infer<typeof regressionResultSchema>;

/** Body of POST /api/baselines/check. */
export const baselineCheckRequestSchema = z.object({
  tolerance_sigma: num.positive().default(3),
  results: z.array(comparableResultSchema).min(1),
});
export type BaselineCheckRequest = z.infer<typeof baselineCheckRequestSchema>;
export type BaselineCheckRequestInput = z.input<typeof baselineCheckRequestSchema>;

export const baselineCheckEntrySchema = z.object({
  source: z.string(),
  kind: comparableKindSchema,
  status: z.enum(['pass', 'fail', 'no_baseline']),
  baseline_run_id: z.string().nullable(),
  n_failed: z.number().int().nonnegative(),
  items: z.array(regressionItemSchema),
});
export type BaselineCheckEntry = z.infer<typeof baselineCheckEntrySchema>;

/** Response of POST /api/baselines/check; `sightline baseline check` turns it into JUnit XML. */
export const baselineCheckResponseSchema = z.object({
  schema: z.literal('sightline/baseline-check@1'),
  tolerance_sigma: num.positive(),
  pass: z.boolean(),
  results: z.array(baselineCheckEntrySchema),
});
export type BaselineCheckResponse = z.infer<typeof baselineCheckResponseSchema>;
