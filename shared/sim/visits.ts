import type { Rng } from './random.js';
import type { DispersionConstant } from '../physics/constants.js';
import { formatMjd, normalise } from '../time/mjd.js';

export interface SimToa {
  source: string;
  mjd: string;
  freq_mhz: number;
  err_us: number;
  residual_us: number;
  receiver?: string;
}

export interface VisitSpec {
  source: string;
  startMjd: number;
  /** injected DM offset, pc cm⁻³ */
  ddm: number;
  freqsMhz: number[];
  errUs: number[];
  offsetUs?: number;
  receivers?: string[];
  receiverOffsetsUs?: Record<string, number>;
}

/** Timing residuals of one visit: offset + K·ΔDM/ν² (µs) + Gaussian noise of the quoted error. */
export function simulateResidualVisit(k: DispersionConstant, spec: VisitSpec, rng: Rng): SimToa[] {
  return spec.freqsMhz.map((f, i) => {
    const receiver = spec.receivers?.[i];
    const offset =
      (spec.offsetUs ?? 0) + (receiver ? (spec.receiverOffsetsUs?.[receiver] ?? 0) : 0);
    const secOfDay = (spec.startMjd % 1) * 86400 + i * 10;
    const epoch = normalise({
      day: Math.floor(spec.startMjd),
      sec: Math.floor(secOfDay),
      frac: secOfDay % 1,
    });
    const toa: SimToa = {
      source: spec.source,
      mjd: formatMjd(epoch, 15),
      freq_mhz: f,
      err_us: spec.errUs[i],
      residual_us: offset + (k.value * 1e6 * spec.ddm) / (f * f) + spec.errUs[i] * rng.normal(),
    };
    if (receiver) toa.receiver = receiver;
    return toa;
  });
}
