import type { DispersionConstant } from '../physics/constants.js';
import { addSeconds, formatMjd, parseMjd, type Epoch } from '../time/mjd.js';
import { wrapPhase, type Cube } from './cube.js';
import { referencePhase, type CubeContext } from './context.js';

/** Digits after the point of arrival-time MJDs (1e-15 d ≈ 0.09 ns). */
export const TOA_MJD_DECIMALS = 15;

/** Arrival-time channels below this matched-filter S/N are skipped (interfaces.md default). */
export const DEFAULT_MIN_SNR = 8;

export interface ChannelToa {
  /** channel index in the cube, 0-based */
  channel: number;
  freqMhz: number;
  epoch: Epoch;
  mjd: string;
  errUs: number;
  snr: number;
  /** the channel's phase after unwrapping around the reference, turns */
  phase: number;
}

export interface CubeToas {
  source: string;
  mjd: string;
  nchan: number;
  nFlagged: number;
  nLowSnr: number;
  /** channels whose match had no usable maximum (negative amplitude or flat curvature) */
  nFailed: number;
  toas: ChannelToa[];
  warnings: string[];
}

/**
 * Seconds from the cube's epoch to the moment its phase `phase` (turns, at the cube's
 * reference frequency after dedispersion) arrives at frequency ν: P·phase plus the dispersion
 * delay that dedispersion at DM₀ removed, K·DM₀·(ν⁻² − ν_ref⁻²) (ν_ref = ∞ when not given).
 */
export function arrivalOffsetS(
  cube: Cube,
  phase: number,
  freqMhz: number,
  k: DispersionConstant,
): number {
  const ref = cube.refFreqMhz === null ? 0 : 1 / (cube.refFreqMhz * cube.refFreqMhz);
  return cube.periodS * phase + k.value * cube.dmApplied * (1 / (freqMhz * freqMhz) - ref);
}

/**
 * One arrival time per channel with S/N ≥ minSnr: the channel's template delay φ_c (unwrapped
 * around the channels' weighted mean phase so that all lie in the same turn), plus the
 * template's fiducial phase, as an epoch; error σ_φ·P.
 */
export function channelToas(ctx: CubeContext, k: DispersionConstant, minSnr: number): CubeToas {
  const { cube } = ctx;
  const epoch0 = parseMjd(cube.mjd);
  const ref = referencePhase(ctx, minSnr);
  const out: CubeToas = {
    source: cube.source,
    mjd: cube.mjd,
    nchan: cube.nchan,
    nFlagged: 0,
    nLowSnr: 0,
    nFailed: 0,
    toas: [],
    warnings: [...ctx.template.warnings],
  };
  ctx.matches.forEach((m, c) => {
    if (!m) {
      out.nFlagged++;
      return;
    }
    if (!m.ok) {
      out.nFailed++;
      return;
    }
    if (!(m.snr >= minSnr)) {
      out.nLowSnr++;
      return;
    }
    const phase = ref + wrapPhase(m.phase - ref);
    const seconds = arrivalOffsetS(cube, phase + ctx.template.fiducial, cube.freqs[c], k);
    const epoch = addSeconds(epoch0, seconds);
    out.toas.push({
      channel: c,
      freqMhz: cube.freqs[c],
      epoch,
      mjd: formatMjd(epoch, TOA_MJD_DECIMALS),
      errUs: m.phaseErr * cube.periodS * 1e6,
      snr: m.snr,
      phase,
    });
  });
  if (out.toas.length === 0) {
    out.warnings.push(
      `no channel reached S/N ${minSnr} (${out.nLowSnr} below it, ${out.nFlagged} flagged, ${out.nFailed} without a usable match)`,
    );
  }
  return out;
}
