import { gaussModel } from '../profiles/models.js';
import type { ProfileSet } from '../profiles/types.js';
import type { Rng } from './random.js';

/**
 * Simulated profile cubes (demo data, tests, benchmarks): Gaussian pulse components sampled
 * analytically at each channel's true phase — the pulse's phase at the reference frequency plus
 * the residual dispersion K·(DM_true − DM_applied)·(ν⁻² − ν_ref⁻²)/P — optionally scattered by
 * a thin screen (periodic exponentially modified Gaussian, τ ∝ ν^−α), with white noise of known
 * σ. Bin j holds phase j/nbin, as Sightline reads cubes.
 */
export interface CubeSimSpec {
  source: string;
  mjd: string;
  periodS: number;
  nbin: number;
  freqsMhz: number[];
  /** the DM the simulated channels are dedispersed with (written as the cube's dm) */
  dmApplied: number;
  /** the DM the pulses really travelled through */
  dmTrue: number;
  /** the frequency phase 0 refers to; null = infinite */
  refFreqMhz: number | null;
  /** dispersion constant K, s MHz² pc⁻¹ cm³ */
  k: number;
  /** the pulse's phase (turns) at the reference frequency */
  phase: number;
  /** pulse components: relative peak height, centre offset from `phase` and σ, both in turns */
  components: Array<{ weight: number; offset: number; width: number }>;
  /** peak height (before scattering) of the summed components at each channel */
  amplitude: (freqMhz: number, channel: number) => number;
  /** τ at 1 GHz in seconds and its index (none when absent) */
  scatter?: { tau1GhzS: number; alpha: number };
  /** per-bin noise σ */
  noise: number;
  /** channels written as all-zero (flagged) */
  flagged?: number[];
  /** give the noise σ per channel in the file */
  writeNoise?: boolean;
}

export interface SimulatedCube {
  set: ProfileSet;
  /** each channel's true phase of the pulse centre, turns (before wrapping) */
  truePhase: number[];
}

export function simulateCube(spec: CubeSimSpec, rng: Rng): SimulatedCube {
  const { nbin } = spec;
  const model = gaussModel(spec.components.length, nbin);
  const ref = spec.refFreqMhz === null ? 0 : 1 / spec.refFreqMhz ** 2;
  const flagged = new Set(spec.flagged ?? []);
  // Gaussian of σ (bins) and peak 1 has area σ√(2π)
  const peakArea = (widthTurns: number) => widthTurns * nbin * Math.sqrt(2 * Math.PI);
  const truePhase: number[] = [];
  const bands = spec.freqsMhz.map((f, c) => {
    const phase =
      spec.phase + (spec.k * (spec.dmTrue - spec.dmApplied) * (1 / (f * f) - ref)) / spec.periodS;
    truePhase.push(phase);
    const bins = new Float64Array(nbin);
    if (flagged.has(c)) return { freqMhz: f, bins };
    const tauBins = spec.scatter
      ? Math.max(
          1e-3,
          ((spec.scatter.tau1GhzS * (f / 1000) ** -spec.scatter.alpha) / spec.periodS) * nbin,
        )
      : 1e-3;
    const amp = spec.amplitude(f, c);
    const params = [0, tauBins];
    for (const comp of spec.components) {
      const centre = phase + comp.offset;
      params.push(
        amp * comp.weight * peakArea(comp.width),
        (centre - Math.floor(centre)) * nbin,
        comp.width * nbin,
      );
    }
    model.evaluate(params, bins);
    for (let j = 0; j < nbin; j++) bins[j] += spec.noise * rng.normal();
    return spec.writeNoise ? { freqMhz: f, bins, noise: spec.noise } : { freqMhz: f, bins };
  });
  const set: ProfileSet = {
    source: spec.source,
    mjd: spec.mjd,
    periodS: spec.periodS,
    dm: spec.dmApplied,
    bands,
  };
  if (spec.refFreqMhz !== null) set.refFreqMhz = spec.refFreqMhz;
  if (flagged.size) set.flagged = [...flagged].sort((a, b) => a - b);
  return { set, truePhase };
}

/** The noiseless template of the same components: peak-normalised, centred at `phase`. */
export function simulateTemplate(
  spec: Pick<CubeSimSpec, 'nbin' | 'components'>,
  phase: number,
): Float64Array {
  const { nbin } = spec;
  const model = gaussModel(spec.components.length, nbin);
  const params = [0, 1e-3];
  for (const comp of spec.components) {
    const centre = phase + comp.offset;
    params.push(
      comp.weight * comp.width * nbin * Math.sqrt(2 * Math.PI),
      (centre - Math.floor(centre)) * nbin,
      comp.width * nbin,
    );
  }
  const bins = new Float64Array(nbin);
  model.evaluate(params, bins);
  return bins;
}
