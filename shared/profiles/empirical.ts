/**
 * Empirical scattering time against DM (Bhat et al. 2004, ApJ 605, 759, eq. 9; from memory):
 * log₁₀ τ_ms = −6.46 + 0.154 log₁₀ DM + 1.07 (log₁₀ DM)² − 3.86 log₁₀ ν_GHz, scatter ≈ 0.6 dex.
 */
export const TAU_DM_SCATTER_DEX = 0.6;

/**
 * DMs the relation is used for. It was fitted to pulsars with DMs from a few to about a thousand
 * pc cm⁻³ (from memory); its quadratic in log₁₀ DM turns upward below DM ≈ 0.85, and for DM → 0
 * (or huge DMs) it gives absurd or infinite τ, so outside this range no expectation is given.
 */
export const TAU_DM_RANGE = { min: 1, max: 3000 } as const;

export function expectedTauUs(dm: number, freqMhz: number): number {
  const l = Math.log10(dm);
  const logMs = -6.46 + 0.154 * l + 1.07 * l * l - 3.86 * Math.log10(freqMhz / 1000);
  return 1000 * 10 ** logMs;
}

/**
 * Frequency index of τ for a turbulent medium with power-law index β (3 < β < 4):
 * α = 2β/(β − 2), so Kolmogorov β = 11/3 gives α = 4.4 (common practice).
 */
export function alphaFromBeta(beta: number): number {
  return (2 * beta) / (beta - 2);
}

export const KOLMOGOROV_ALPHA = alphaFromBeta(11 / 3);
