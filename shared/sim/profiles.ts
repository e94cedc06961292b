import type { Rng } from './random.js';
import { gaussModel } from '../profiles/models.js';

export interface ProfileSimSpec {
  nbin: number;
  freqsMhz: number[];
  /** τ at 1 GHz, in units of the pulse period */
  tau1GhzPeriods: number;
  alpha: number;
  /** Gaussian components: area (flux × bins), centre (phase 0–1), width σ (phase) */
  components: Array<{ area: number; phase: number; width: number }>;
  /** per-bin noise σ */
  noise: number;
  baseline?: number;
}

/**
 * Profiles of one visit: the intrinsic Gaussian components scattered by a thin screen with
 * τ(ν) = τ_1GHz (ν/1 GHz)^−α (periodic EMG), plus white noise of known σ.
 */
export function simulateProfiles(
  spec: ProfileSimSpec,
  rng: Rng,
): Array<{ freqMhz: number; bins: Float64Array; tauBins: number }> {
  const { nbin } = spec;
  const model = gaussModel(spec.components.length, nbin);
  return spec.freqsMhz.map((freqMhz) => {
    const tauBins = Math.max(1e-3, spec.tau1GhzPeriods * nbin * (freqMhz / 1000) ** -spec.alpha);
    const params = [spec.baseline ?? 0, tauBins];
    for (const c of spec.components) params.push(c.area, c.phase * nbin, c.width * nbin);
    const bins = new Float64Array(nbin);
    model.evaluate(params, bins);
    for (let i = 0; i < nbin; i++) bins[i] += spec.noise * rng.normal();
    return { freqMhz, bins, tauBins };
  });
}
