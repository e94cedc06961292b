import { z } from 'zod';
import { envelope } from './common.js';

const num = z.number();
const range = z.tuple([num, num]);

/** A flagged channel and why: found here (persistent/intermittent/dead) or given beforehand. */
export const rfiChannelSchema = z.object({
  channel: z.number().int().nonnegative(),
  freq_mhz: num,
  kind: z.enum(['persistent', 'intermittent', 'dead', 'given']),
});

/**
 * Downsampled pictures for the review app and exports: block means on a grid of at most
 * 128 × 128, row-major, rows along the first named axis.
 */
export const scintPicturesSchema = z.object({
  dynspec: z.object({
    n_freq: z.number().int().positive(),
    n_time: z.number().int().positive(),
    freq_mhz: range,
    time_s: range,
    /** intensity (flags filled by interpolation in frequency) */
    values: z.array(num),
    /** share of each block's pixels that are flagged, 0–1 */
    flagged: z.array(num),
  }),
  acf: z.object({
    freq_cut: z.array(z.object({ lag_mhz: num, acf: num, model: num })),
    time_cut: z.array(z.object({ lag_s: num, acf: num, model: num })),
    /** the central ACF, zero lag in the middle; NaN-free (null where undefined) */
    patch: z.object({
      n_freq_lag: z.number().int().positive(),
      n_time_lag: z.number().int().positive(),
      freq_lag_mhz: range,
      time_lag_s: range,
      values: z.array(num.nullable()),
    }),
  }),
  secondary: z.object({
    n_delay: z.number().int().positive(),
    n_ft: z.number().int().positive(),
    /** positive delays only (the spectrum of a real array is point-symmetric) */
    delay_us: range,
    ft_mhz: range,
    db: z.array(num),
    /** the fitted parabola f_τ = η f_t², sampled; null without an arc fit */
    arc: z.array(z.object({ ft_mhz: num, delay_us: num })).nullable(),
  }),
});

/** `sightline/scint@1` (interfaces.md). */
export const scintResultSchema = z.object({
  ...envelope('scint'),
  source: z.string(),
  mjd: z.string().nullable(),
  receiver: z.string().nullable(),
  nchan: z.number().int().positive(),
  nsub: z.number().int().positive(),
  freq_min_mhz: num,
  freq_max_mhz: num,
  channel_mhz: num.positive(),
  subint_s: num.positive(),
  rfi: z.object({
    flagged_fraction: num.min(0).max(1),
    channels_flagged: z.array(z.number().int().nonnegative()),
    channels: z.array(rfiChannelSchema),
    subints_flagged: z.array(z.number().int().nonnegative()),
    pixels_flagged: z.number().int().nonnegative(),
    snr_cost_fraction: num.min(0).max(1),
    fence_k: num.positive(),
    pixel_sigma: num.positive(),
  }),
  /** 'measured', or 'unresolved' (no scintle structure across channels: Δν_d is below the
   *  channel width or the scintles are washed out; then only limits are given) */
  status: z.enum(['measured', 'unresolved', 'failed']),
  dnu_d_mhz: num.positive().nullable(),
  /** unresolved: Δν_d below this (the channel width), so τ above tau_lower_us */
  dnu_d_upper_mhz: num.positive().nullable(),
  tau_lower_us: num.positive().nullable(),
  dnu_d_err_mhz: num.positive().nullable(),
  dt_d_s: num.positive().nullable(),
  dt_d_err_s: num.positive().nullable(),
  n_scintles: num.positive().nullable(),
  c1: num.positive(),
  tau_us: num.positive().nullable(),
  tau_err_us: num.positive().nullable(),
  /** the band centre, where τ from the bandwidth applies */
  ref_freq_mhz: num.positive(),
  arc_curvature: z
    .object({
      /** f_τ = η f_t², η in µs/mHz² (numerically s³) */
      eta_s3: num.positive(),
      eta_lo_s3: num.positive(),
      eta_hi_s3: num.positive(),
      contrast_db: num,
    })
    .nullable(),
  /** τ from a profile scattering fit of the same visit, carried to ref_freq_mhz */
  tau_from_tails: z
    .object({
      tau_us: num,
      tau_err_us: num.nullable(),
      freq_mhz: num,
      from: z.string(),
    })
    .nullable(),
  pictures: scintPicturesSchema,
  warnings: z.array(z.string()),
});
export type ScintResult = z.infer<typeof scintResultSchema>;
export type ScintPictures = z.infer<typeof scintPicturesSchema>;
