import { z } from 'zod';
import { constantSchema, envelope } from './common.js';

const num = z.number();
export const seriesPointSchema = z.object({
  source: z.string(),
  mjd: num,
  dm: num,
  dm_err: num.nonnegative(),
  n_toas: z.number().int().positive(),
  dm_solar: num.optional(),
});
export const smoothPointSchema = z.object({
  source: z.string(),
  mjd: num,
  dm: num,
  dm_err: num.nonnegative(),
});
export const gpFitSchema = z.object({
  amplitude_dm: num.nonnegative(),
  length_days: num.positive(),
  white_dm: num.nonnegative(),
  mean_dm: num,
  log_likelihood: num,
  converged: z.boolean().optional(),
  /** false when the fit found no correlated variation, or left most scatter to the white term */
  usable: z.boolean().optional(),
});
export const seriesSourceSchema = z.object({
  source: z.string(),
  dm_kind: z.enum(['absolute', 'offset']),
  reference_dm: num,
  reference: z.enum(['weighted_mean', 'given', 'zero']),
  n_points: z.number().int().nonnegative(),
  n_unconstrained: z.number().int().nonnegative(),
  /** first and last arrival time of the fitted visits: the span the series covers */
  mjd_first: num.optional(),
  mjd_last: num.optional(),
  ra_deg: num.optional(),
  dec_deg: num.optional(),
  gp: gpFitSchema.optional(),
  warnings: z.array(z.string()).optional(),
});

export const dmSeriesResultSchema = z.object({
  ...envelope('dm-series'),
  constant: constantSchema,
  solar: z.object({ n0_cm3: num.nonnegative(), model: z.string() }).optional(),
  sources: z.array(seriesSourceSchema),
  points: z.array(seriesPointSchema),
  smooth: z.array(smoothPointSchema).optional(),
});
export type DmSeriesResult = z.infer<typeof dmSeriesResultSchema>;
export type SeriesPoint = z.infer<typeof seriesPointSchema>;
export type SmoothPoint = z.infer<typeof smoothPointSchema>;
