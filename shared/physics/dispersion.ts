import type { DispersionConstant } from './constants.js';

/** Cold-plasma delay to infinite frequency, s: t = K·DM/ν² (Lorimer & Kramer 2005, eq. 4.7). */
export function delayToInfinityS(k: DispersionConstant, dm: number, freqMhz: number): number {
  return (k.value * dm) / (freqMhz * freqMhz);
}

/** Delay of freqMhz relative to refMhz, s: Δt = K·DM·(ν⁻² − ν_ref⁻²); positive when ν < ν_ref. */
export function delayBetweenS(
  k: DispersionConstant,
  dm: number,
  freqMhz: number,
  refMhz: number,
): number {
  return k.value * dm * (1 / (freqMhz * freqMhz) - 1 / (refMhz * refMhz));
}

/**
 * Intra-channel smearing, s: t ≈ 2K·DM·Δν/ν³ (Lorimer & Kramer 2005, from memory), the
 * first-order sweep across one channel of width Δν centred at ν.
 */
export function channelSmearingS(
  k: DispersionConstant,
  dm: number,
  freqMhz: number,
  channelWidthMhz: number,
): number {
  return (2 * k.value * dm * channelWidthMhz) / (freqMhz * freqMhz * freqMhz);
}

/** The full sweep across a band [loMhz, hiMhz], s. */
export function bandSweepS(
  k: DispersionConstant,
  dm: number,
  loMhz: number,
  hiMhz: number,
): number {
  return delayBetweenS(k, dm, loMhz, hiMhz);
}

/** DM that produces delay `delayS` between two frequencies (inverse of delayBetweenS). */
export function dmFromDelay(
  k: DispersionConstant,
  delayS: number,
  freqMhz: number,
  refMhz: number,
): number {
  return delayS / (k.value * (1 / (freqMhz * freqMhz) - 1 / (refMhz * refMhz)));
}
