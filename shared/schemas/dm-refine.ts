import { z } from 'zod';
import { constantSchema, envelope } from './common.js';

const num = z.number();

/** `sightline/dm-refine@1` (interfaces.md): DM by S/N over trial DMs, and from channel TOAs. */
export const dmRefineResultSchema = z.object({
  ...envelope('dm-refine'),
  constant: constantSchema,
  source: z.string(),
  mjd: z.string(),
  period_s: num.positive(),
  nbin: z.number().int().positive(),
  /** the DM the cube's channels were dedispersed with; trial DMs shift relative to it */
  dm_applied: num,
  n_channels: z.number().int().nonnegative(),
  n_flagged: z.number().int().nonnegative(),
  /** channels with weight in the S/N sum */
  n_used: z.number().int().nonnegative(),
  /** where the template came from: a file, or built from this cube */
  template: z.object({ path: z.string().nullable(), built_from_cube: z.boolean() }),
  best: z.object({ dm: num, dm_err: num.positive().nullable(), snr: num }),
  curve: z.array(z.object({ dm: num, snr: num })),
  at_edge: z.boolean(),
  from_toas: z.object({
    dm: num.nullable(),
    dm_err: num.positive().nullable(),
    dm_err_scaled: num.positive().nullable(),
    reduced_chi2: num.nonnegative().nullable(),
    n_toas: z.number().int().nonnegative(),
    n_low_snr: z.number().int().nonnegative(),
    min_snr: num,
  }),
  /** |best − from_toas| in units of their combined error (null when either is missing) */
  difference_sigma: num.nonnegative().nullable(),
  profile: z
    .object({ path: z.string(), freq_mhz: num.positive(), noise: num.nonnegative() })
    .nullable(),
  warnings: z.array(z.string()),
});
export type DmRefineResult = z.infer<typeof dmRefineResultSchema>;
