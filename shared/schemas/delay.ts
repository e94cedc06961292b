import { z } from 'zod';
import { constantSchema, envelope } from './common.js';

export const delayRowSchema = z.object({
  freq_mhz: z.number().positive(),
  ref_mhz: z.number().positive().nullable(),
  delay_s: z.number(),
  smearing_s: z.number().nonnegative().optional(),
});

export const delayResultSchema = z.object({
  ...envelope('delay'),
  constant: constantSchema,
  dm: z.number(),
  channel_width_mhz: z.number().positive().optional(),
  rows: z.array(delayRowSchema),
});
export type DelayResult = z.infer<typeof delayResultSchema>;
