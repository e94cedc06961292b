import { createRng, type Rng } from './random.js';
import {
  DEMO_CADENCE_DAYS,
  DEMO_MJD_END,
  DEMO_MJD_START,
  DEMO_PULSARS,
  RECEIVERS,
  type DemoPulsar,
} from './scenario.js';
import { dispersionConstant } from '../physics/constants.js';
import { solarWindDmAt } from '../solar/solar-wind.js';
import { formatMjd, normalise } from '../time/mjd.js';

/** Density of the simulated solar wind at 1 AU, cm⁻³ (within the usual 4–10, common practice). */
export const DEMO_SOLAR_N0 = 8;

export interface DemoToa {
  source: string;
  mjd: string;
  freq_mhz: number;
  err_us: number;
  residual_us: number;
  receiver: string;
}

export interface DemoTruth {
  source: string;
  visits: Array<{ mjd: number; ddm_ism: number; dm_solar: number }>;
}

/** How each invented pulsar's DM wanders (pc cm⁻³), and its timing precision per receiver. */
interface Behaviour {
  redRms: number;
  trendPerYear?: number;
  annual?: number;
  lens?: { mjd: number; sigmaDays: number; peak: number };
  errUs: Record<string, number>;
}

const BEHAVIOUR: Record<string, Behaviour> = {
  'SBP-A': { redRms: 6e-5, errUs: { low: 0.3, mid: 0.12, high: 0.25 } },
  'SBP-B': { redRms: 3e-5, errUs: { low: 0.25, mid: 0.1, high: 0.15 } },
  'SBP-C': {
    redRms: 1.5e-4,
    trendPerYear: 6e-4,
    annual: 3e-4,
    errUs: { low: 0.9, mid: 0.4, high: 0.7 },
  },
  'SBP-D': { redRms: 8e-4, errUs: { low: 4, mid: 1.2, high: 1.5 } },
  'SBP-E': {
    redRms: 2e-4,
    lens: { mjd: 60860, sigmaDays: 13, peak: 4e-3 },
    errUs: { low: 1.2, mid: 0.6, high: 0.9 },
  },
  'SBP-F': { redRms: 2e-3, errUs: { low: 8, mid: 2.5, high: 2 } },
};

const RECEIVER_OFFSET_US: Record<string, number> = { low: 0.8, mid: 0, high: -0.5 };
const SUBBANDS: Record<string, number> = { low: 4, mid: 6, high: 4 };

/** A smooth random DM wander: sinusoids with a steep power-law spectrum and random phases. */
function redProcess(rng: Rng, rms: number, spanDays: number): (mjd: number) => number {
  const terms = Array.from({ length: 24 }, (_, i) => {
    const f = (i + 1) / (2 * spanDays);
    return { f, amp: Math.pow(i + 1, -1.7), phase: 2 * Math.PI * rng.uniform() };
  });
  const norm = Math.sqrt(terms.reduce((s, t) => s + (t.amp * t.amp) / 2, 0));
  return (mjd) =>
    (rms / norm) *
    terms.reduce((s, t) => s + t.amp * Math.sin(2 * Math.PI * t.f * mjd + t.phase), 0);
}

/** ΔDM(t) of the interstellar medium for one pulsar (without the solar wind). */
export function demoIsmDm(p: DemoPulsar, seed: number): (mjd: number) => number {
  const b = BEHAVIOUR[p.source];
  const rng = createRng(seed ^ hash(p.source));
  const red = redProcess(rng, b.redRms, DEMO_MJD_END - DEMO_MJD_START);
  const mid = (DEMO_MJD_START + DEMO_MJD_END) / 2;
  return (mjd) => {
    let v = red(mjd);
    if (b.trendPerYear) v += (b.trendPerYear * (mjd - mid)) / 365.25;
    if (b.annual) v += b.annual * Math.sin((2 * Math.PI * (mjd - DEMO_MJD_START)) / 365.25);
    if (b.lens) v += b.lens.peak * Math.exp(-0.5 * ((mjd - b.lens.mjd) / b.lens.sigmaDays) ** 2);
    return v;
  };
}

function hash(s: string): number {
  let h = 2166136261;
  for (let i = 0; i < s.length; i++) h = Math.imul(h ^ s.charCodeAt(i), 16777619);
  return h >>> 0;
}

/**
 * Timing residuals of one invented pulsar over the three demo years: visits every ~14 days,
 * each receiver's band split into sub-bands, residual = receiver offset + K·ΔDM(t)/ν² (ISM and
 * solar wind) + white noise with the quoted error.
 */
export function simulateDemoPulsar(
  p: DemoPulsar,
  seed: number,
): { toas: DemoToa[]; truth: DemoTruth } {
  const k = dispersionConstant('conventional');
  const rng = createRng(seed * 7919 + hash(p.source));
  const ism = demoIsmDm(p, seed);
  const b = BEHAVIOUR[p.source];
  const toas: DemoToa[] = [];
  const truth: DemoTruth = { source: p.source, visits: [] };
  for (
    let t = DEMO_MJD_START + rng.uniform() * 3;
    t < DEMO_MJD_END;
    t += DEMO_CADENCE_DAYS + (rng.uniform() - 0.5) * 3
  ) {
    const start = Math.floor(t) + 0.1 + rng.uniform() * 0.6;
    const solar = solarWindDmAt(DEMO_SOLAR_N0, p.ra_deg, p.dec_deg, start).dm;
    const ddm = ism(start);
    truth.visits.push({ mjd: start, ddm_ism: ddm, dm_solar: solar });
    RECEIVERS.forEach((r, ri) => {
      if (r.name === 'low' && rng.uniform() < 0.1) return;
      if (r.name === 'high' && rng.uniform() < 0.4) return;
      const nsub = SUBBANDS[r.name];
      const width = (r.hiMhz - r.loMhz) / nsub;
      for (let s = 0; s < nsub; s++) {
        const freq = r.loMhz + (s + 0.5) * width;
        const err = b.errUs[r.name] * (0.8 + 0.5 * rng.uniform());
        const secOfDay =
          (start - Math.floor(start) + ri * 0.021 + s * 1e-5) * 86400 + rng.uniform() * 0.1;
        const epoch = normalise({
          day: Math.floor(start),
          sec: Math.floor(secOfDay),
          frac: secOfDay - Math.floor(secOfDay),
        });
        const signal = RECEIVER_OFFSET_US[r.name] + (k.value * 1e6 * (ddm + solar)) / (freq * freq);
        toas.push({
          source: p.source,
          mjd: formatMjd(epoch, 15),
          freq_mhz: Number(freq.toFixed(3)),
          err_us: Number(err.toFixed(4)),
          residual_us: Number((signal + err * rng.normal()).toFixed(4)),
          receiver: r.name,
        });
      }
    });
  }
  return { toas, truth };
}

export interface DemoDataSet {
  seed: number;
  pulsars: DemoPulsar[];
  solarN0: number;
  sets: Array<{ toas: DemoToa[]; truth: DemoTruth }>;
}

export function simulateDemo(seed = 1): DemoDataSet {
  return {
    seed,
    pulsars: DEMO_PULSARS,
    solarN0: DEMO_SOLAR_N0,
    sets: DEMO_PULSARS.map((p) => simulateDemoPulsar(p, seed)),
  };
}
