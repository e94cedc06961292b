import { z } from 'zod';
import { envelope } from './common.js';

const num = z.number();
export const scatterBandSchema = z.object({
  freq_mhz: num.positive(),
  status: z.enum(['fitted', 'upper_limit', 'failed']),
  tau_us: num,
  tau_err_us: num.nonnegative().nullable(),
  /** for upper limits: the 2σ one-sided limit from the profile likelihood (Δχ² = 4) */
  tau_upper_us: num.optional(),
  chi2: num.nonnegative(),
  dof: z.number().int(),
  reduced_chi2: num.nonnegative().nullable(),
  snr: num,
  noise: num.nonnegative(),
  noise_estimated: z.boolean(),
  params: z.record(z.string(), num),
  param_errors: z.record(z.string(), num.nullable()),
  iterations: z.number().int().nonnegative(),
  warnings: z.array(z.string()),
});

export const powerLawSchema = z.object({
  ref_freq_mhz: num.positive(),
  tau_ref_us: num,
  tau_ref_err_us: num.nonnegative(),
  alpha: num,
  alpha_err: num.nonnegative().nullable(),
  alpha_fixed: z.boolean(),
  n_bands: z.number().int().positive(),
  chi2: num.nonnegative(),
  dof: z.number().int().nonnegative(),
  reduced_chi2: num.nonnegative().nullable(),
});

export const scatterFitResultSchema = z.object({
  ...envelope('scatter-fit'),
  source: z.string(),
  mjd: z.string(),
  period_s: num.positive(),
  nbin: z.number().int().positive(),
  model: z.enum(['gauss', 'gauss2', 'gauss3', 'template']),
  dm: num.nullable(),
  bands: z.array(scatterBandSchema),
  power_law: powerLawSchema.nullable(),
  expected_tau_us: num.nullable(),
  expected: z
    .object({ relation: z.string(), dm: num, freq_mhz: num, tau_us: num, scatter_dex: num })
    .nullable(),
  warnings: z.array(z.string()),
});
export type ScatterFitResult = z.infer<typeof scatterFitResultSchema>;
export type ScatterBand = z.infer<typeof scatterBandSchema>;
