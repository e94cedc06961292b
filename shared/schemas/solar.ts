import { z } from 'zod';
import { envelope } from './common.js';

export const solarResultSchema = z.object({
  ...envelope('solar'),
  mjd: z.number(),
  ra_deg: z.number().min(0).max(360),
  dec_deg: z.number().min(-90).max(90),
  n0_cm3: z.number().nonnegative(),
  elongation_deg: z.number().min(0).max(180),
  sun_distance_au: z.number().positive(),
  dm: z.number().nonnegative(),
  model: z.string(),
  warnings: z.array(z.string()).optional(),
});
export type SolarResult = z.infer<typeof solarResultSchema>;
