import { z } from 'zod';
import { CONSTANT_NAMES, type ConstantName } from '../physics/constants.js';

/**
 * A server-side analysis of an upload (interfaces.md "analyses"): the kind, the upload, and the
 * options of the matching CLI command that are safe to take from a request. Options that name
 * other files (templates, sidecars, position lists) have no place here: `strictObject` rejects
 * them rather than ignoring them. Ranges are the CLI's own checks plus bounds that keep a request
 * from asking for nonsense; defaults are the CLI's and are applied where the request is mapped to
 * the command's options (server/jobs/analyses.ts), so a stored request says what was asked.
 */
export const ANALYSIS_KINDS = ['dm-fit', 'dm-series', 'scatter-fit'] as const;
export type AnalysisKind = (typeof ANALYSIS_KINDS)[number];

const constant = z.enum(CONSTANT_NAMES as [ConstantName, ...ConstantName[]]);
const days = z.number().positive().max(36525);
const alphaValue = z.number().positive().max(10);
const refFreqMhz = z.number().positive().max(100_000);

/** DM windows of fixed length and gap-separated visits are two different groupings. */
const oneGrouping = (p: { window_days?: number; gap_days?: number }) =>
  p.window_days === undefined || p.gap_days === undefined;
const oneGroupingIssue = {
  message: 'give either window_days or gap_days, not both',
  path: ['gap_days'],
};

export const dmFitParamsSchema = z
  .strictObject({
    window_days: days.optional(),
    gap_days: days.optional(),
    clip_sigma: z.number().min(1).max(100).optional(),
    period_s: z.number().positive().max(100).optional(),
    evolution: z.number().int().min(0).max(5).optional(),
    scatter: z.enum(['none', 'fixed', 'free']).optional(),
    alpha: alphaValue.optional(),
    ref_freq_mhz: refFreqMhz.optional(),
    constant: constant.optional(),
  })
  .refine(oneGrouping, oneGroupingIssue)
  .refine(
    (p) =>
      (p.alpha === undefined && p.ref_freq_mhz === undefined) || (p.scatter ?? 'none') !== 'none',
    {
      message: 'alpha and ref_freq_mhz describe the scattering term: set scatter to fixed or free',
      path: ['scatter'],
    },
  );

export const dmSeriesParamsSchema = z
  .strictObject({
    window_days: days.optional(),
    gap_days: days.optional(),
    smooth: z.enum(['none', 'gp']).optional(),
    constant: constant.optional(),
  })
  .refine(oneGrouping, oneGroupingIssue);

export const scatterFitParamsSchema = z.strictObject({
  // the template model needs a second file, which a single-upload request cannot name
  model: z.enum(['gauss', 'gauss2', 'gauss3']).optional(),
  alpha: z.union([z.literal('free'), alphaValue]).optional(),
  ref_freq_mhz: refFreqMhz.optional(),
  /** DM for the empirical τ–DM comparison (default: the file's own) */
  dm: z.number().positive().max(10_000).optional(),
});

/** An upload's id: letters, digits, '-' and '_' only, so it can never reach outside a folder. */
export const uploadIdSchema = z
  .string()
  .min(1)
  .max(128)
  .regex(/^[A-Za-z0-9_-]+$/, 'letters, digits, "-" and "_" only');

export const analysisRequestSchema = z.discriminatedUnion('kind', [
  z.strictObject({
    kind: z.literal('dm-fit'),
    upload_id: uploadIdSchema,
    params: dmFitParamsSchema.default({}),
  }),
  z.strictObject({
    kind: z.literal('dm-series'),
    upload_id: uploadIdSchema,
    params: dmSeriesParamsSchema.default({}),
  }),
  z.strictObject({
    kind: z.literal('scatter-fit'),
    upload_id: uploadIdSchema,
    params: scatterFitParamsSchema.default({}),
  }),
]);

export type DmFitParams = z.infer<typeof dmFitParamsSchema>;
export type DmSeriesParams = z.infer<typeof dmSeriesParamsSchema>;
export type ScatterFitParams = z.infer<typeof scatterFitParamsSchema>;
export type AnalysisRequest = z.infer<typeof analysisRequestSchema>;
/** The request as a client writes it (params may be left out). */
export type AnalysisRequestInput = z.input<typeof analysisRequestSchema>;

/** How an analysis that did not produce a result is reported (API `error` body, worker reply). */
export const analysisErrorSchema = z.object({
  code: z.enum(['invalid_input', 'failed']),
  message: z.string(),
  details: z
    .object({
      file: z.string().optional(),
      row: z.number().int().nonnegative().optional(),
      line: z.number().int().nonnegative().optional(),
      column: z.string().optional(),
      reason: z.string().optional(),
    })
    .optional(),
});
export type AnalysisErrorBody = z.infer<typeof analysisErrorSchema>;
