import { z } from 'zod';
import { CONSTANT_NAMES } from '../physics/constants.js';

export const softwareSchema = z.object({ name: z.literal('sightline'), version: z.string() });
export const constantSchema = z.object({
  name: z.enum(CONSTANT_NAMES as [string, ...string[]]),
  value: z.number().positive(),
});
export const inputFileSchema = z.object({
  path: z.string(),
  sha256: z.string().regex(/^[0-9a-f]{64}$/),
  rows: z.number().int().nonnegative(),
});

/** Fields every result carries (interfaces.md "JSON outputs"). */
export function envelope<T extends string>(kind: T) {
  return {
    schema: z.literal(`sightline/${kind}@1` as const),
    software: softwareSchema,
    created_utc: z.string().optional(),
    parameters: z.record(z.string(), z.unknown()).optional(),
    input: z.array(inputFileSchema),
    cautions: z.array(z.string()).optional(),
  };
}

export type Software = z.infer<typeof softwareSchema>;
export type InputFile = z.infer<typeof inputFileSchema>;
