import { z } from 'zod';
import { constantSchema, envelope } from './common.js';

const num = z.number();
export const visitFitSchema = z.object({
  source: z.string(),
  mjd: num,
  mjd_first: num,
  mjd_last: num,
  n_toas: z.number().int().positive(),
  n_freqs: z.number().int().positive(),
  freq_min_mhz: num.positive(),
  freq_max_mhz: num.positive(),
  status: z.enum(['fitted', 'unconstrained']),
  dm: num.nullable(),
  dm_err: num.nonnegative().nullable(),
  dm_err_scaled: num.nonnegative().nullable(),
  dm_kind: z.enum(['absolute', 'offset']),
  offset_us: num.nullable(),
  receiver_offsets_us: z.record(z.string(), num).optional(),
  evolution_us: z.array(num).optional(),
  t_inf_mjd: z.string().optional(),
  tau_ref_us: num.optional(),
  tau_ref_err_us: num.nonnegative().optional(),
  alpha: num.optional(),
  alpha_err: num.nonnegative().nullable().optional(),
  ref_freq_mhz: num.positive().optional(),
  dm_tau_cov: num.optional(),
  dm_tau_corr: num.optional(),
  models: z
    .array(
      z.object({
        name: z.enum(['dm_only', 'alpha_fixed', 'alpha_free']),
        n_params: z.number().int().positive(),
        chi2: num.nonnegative(),
        dof: z.number().int(),
        aic: num,
        bic: num,
        dm: num,
        dm_err: num.nonnegative(),
        alpha: num.optional(),
        tau_ref_us: num.optional(),
      }),
    )
    .optional(),
  preferred: z.enum(['dm_only', 'alpha_fixed', 'alpha_free']).optional(),
  chi2: num.nonnegative().nullable(),
  dof: z.number().int().nonnegative().nullable(),
  reduced_chi2: num.nonnegative().nullable(),
  chi2_p_value: num.min(0).max(1).nullable(),
  flagged_rows: z.array(z.number().int().positive()),
  warnings: z.array(z.string()),
  model: z.string().optional(),
});

export const dmFitResultSchema = z.object({
  ...envelope('dm-fit'),
  constant: constantSchema,
  summary: z.object({
    n_visits: z.number().int().nonnegative(),
    n_fitted: z.number().int().nonnegative(),
    n_unconstrained: z.number().int().nonnegative(),
    n_warnings: z.number().int().nonnegative(),
  }),
  visits: z.array(visitFitSchema),
});
export type DmFitResult = z.infer<typeof dmFitResultSchema>;
export type VisitFitJson = z.infer<typeof visitFitSchema>;
