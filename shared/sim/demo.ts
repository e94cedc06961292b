import { createRng, type Rng } from './random.js';
import { simulateProfiles } from './profiles.js';
import { simulateCube } from './cubes.js';
import { simulateDynspec } from './scint.js';
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
  alpha: number;
  visits: Array<{
    mjd: number;
    ddm_ism: number;
    dm_solar: number;
    tau_1ghz_us: number;
    /** the DM the visit's cube was simulated with (catalogue DM + ISM + solar wind) */
    cube_dm: number;
    /** the dynamic spectrum's injected scintle widths (at its band centre) and receiver */
    dynspec?: { receiver: string; dnu_d_mhz: number; dt_d_s: number; resolved: boolean };
  }>;
}

/** One visit's simulated dynamic spectrum on one receiver: channels × sub-integrations. */
export interface DemoDynspec {
  source: string;
  mjd: string;
  receiver: string;
  f0_mhz: number;
  df_mhz: number;
  dt_s: number;
  nchan: number;
  nsub: number;
  data: Float32Array;
}

/** One visit's simulated profile cube: channels across each receiver used, row-major. */
export interface DemoCube {
  source: string;
  mjd: string;
  period_s: number;
  /** the DM the channels are dedispersed with (the catalogue DM) */
  dm: number;
  freqs_mhz: number[];
  nbin: number;
  bins: Float32Array;
}

/** One visit's simulated profiles: bands × bins, row-major. */
export interface DemoProfiles {
  source: string;
  mjd: string;
  period_s: number;
  dm: number;
  freqs_mhz: number[];
  nbin: number;
  bins: Float32Array;
}

/** How each invented pulsar's DM wanders (pc cm⁻³), and its timing precision per receiver. */
interface Behaviour {
  redRms: number;
  trendPerYear?: number;
  annual?: number;
  lens?: { mjd: number; sigmaDays: number; peak: number };
  errUs: Record<string, number>;
  /** scattering: τ at 1 GHz (µs), its index α, a slow fractional wander; the lens multiplies τ */
  scatter: { tau1GhzUs: number; alpha: number; wander: number; lensBoost?: number };
  /** a second, weaker profile component (area fraction, offset in phase) */
  secondComponent?: { fraction: number; offset: number };
}

const BEHAVIOUR: Record<string, Behaviour> = {
  'SBP-A': {
    redRms: 6e-5,
    errUs: { low: 0.3, mid: 0.12, high: 0.25 },
    scatter: { tau1GhzUs: 0.01, alpha: 4.4, wander: 0.2 },
  },
  'SBP-B': {
    redRms: 3e-5,
    errUs: { low: 0.25, mid: 0.1, high: 0.15 },
    scatter: { tau1GhzUs: 0.05, alpha: 4.4, wander: 0.2 },
  },
  'SBP-C': {
    redRms: 1.5e-4,
    trendPerYear: 6e-4,
    annual: 3e-4,
    errUs: { low: 0.9, mid: 0.4, high: 0.7 },
    scatter: { tau1GhzUs: 0.6, alpha: 4.4, wander: 0.2 },
    secondComponent: { fraction: 0.35, offset: 0.045 },
  },
  'SBP-D': {
    redRms: 8e-4,
    errUs: { low: 4, mid: 1.2, high: 1.5 },
    scatter: { tau1GhzUs: 60, alpha: 4.1, wander: 0.25 },
  },
  'SBP-E': {
    redRms: 2e-4,
    lens: { mjd: 60860, sigmaDays: 13, peak: 4e-3 },
    errUs: { low: 1.2, mid: 0.6, high: 0.9 },
    scatter: { tau1GhzUs: 0.2, alpha: 4.4, wander: 0.2, lensBoost: 40 },
  },
  'SBP-F': {
    redRms: 2e-3,
    errUs: { low: 8, mid: 2.5, high: 2 },
    scatter: { tau1GhzUs: 600, alpha: 4.4, wander: 0.2 },
  },
};

/** Profile bins and sub-bands per receiver in the simulated profile cubes. */
const PROFILE_NBIN = 256;
const PROFILE_SUBBANDS: Record<string, number> = { low: 4, mid: 3, high: 2 };
/** intrinsic pulse width σ as a fraction of the period, and peak S/N at 1 GHz */
const PULSE_WIDTH = 0.012;
const PEAK_SNR_1GHZ = 60;

/** Profile cubes: bins, channels per receiver, channel peak S/N at 1 GHz (noise σ = 1). */
const CUBE_NBIN = 256;
const CUBE_CHANNELS = 16;
const CUBE_PEAK_1GHZ = 10;
/** the `low` receiver's persistent interference block (channel indices within the receiver) */
const CUBE_BAD_LOW = [5, 6];
/** phase of the pulse peak at the cube epoch (infinite frequency) */
const CUBE_PHASE = 0.3;

/** Dynamic spectra: grid, receiver per pulsar, scintillation time, interference. */
const DYN_CHANNELS = 128;
const DYN_SUBINTS = 64;
const DYN_SUBINT_S = 30;
const DYN_RECEIVER: Record<string, string> = {
  'SBP-A': 'mid',
  'SBP-B': 'mid',
  'SBP-C': 'mid',
  'SBP-D': 'low',
  'SBP-E': 'mid',
  'SBP-F': 'low',
};
const DYN_DT_D_S: Record<string, number> = {
  'SBP-A': 600,
  'SBP-B': 450,
  'SBP-C': 240,
  'SBP-D': 150,
  'SBP-E': 300,
  'SBP-F': 90,
};
/** the persistent interference block, by channel of the dynamic spectrum, per receiver */
const DYN_PERSISTENT: Record<string, number[]> = { low: [21, 22, 23], mid: [40, 41, 42, 43] };

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
): {
  toas: DemoToa[];
  truth: DemoTruth;
  profiles: DemoProfiles[];
  cubes: DemoCube[];
  dynspecs: DemoDynspec[];
} {
  const k = dispersionConstant('conventional');
  const rng = createRng(seed * 7919 + hash(p.source));
  // profiles draw from their own stream, so the arrival times do not depend on them
  const profileRng = createRng(seed * 104729 + hash(p.source));
  // and cubes from theirs, so adding cubes changed neither
  const cubeRng = createRng(seed * 130363 + hash(p.source));
  const cubes: DemoCube[] = [];
  const dynRng = createRng(seed * 15485863 + hash(p.source));
  const dynspecs: DemoDynspec[] = [];
  const ism = demoIsmDm(p, seed);
  const b = BEHAVIOUR[p.source];
  const sc = b.scatter;
  const toas: DemoToa[] = [];
  const profiles: DemoProfiles[] = [];
  const truth: DemoTruth = { source: p.source, alpha: sc.alpha, visits: [] };
  const wanderPhase = 2 * Math.PI * profileRng.uniform();
  const tauAt = (mjd: number) => {
    let tau =
      sc.tau1GhzUs *
      (1 + sc.wander * Math.sin((2 * Math.PI * (mjd - DEMO_MJD_START)) / 400 + wanderPhase));
    if (b.lens && sc.lensBoost)
      tau *= 1 + sc.lensBoost * Math.exp(-0.5 * ((mjd - b.lens.mjd) / b.lens.sigmaDays) ** 2);
    return tau;
  };
  for (
    let t = DEMO_MJD_START + rng.uniform() * 3;
    t < DEMO_MJD_END;
    t += DEMO_CADENCE_DAYS + (rng.uniform() - 0.5) * 3
  ) {
    const start = Math.floor(t) + 0.1 + rng.uniform() * 0.6;
    const solar = solarWindDmAt(DEMO_SOLAR_N0, p.ra_deg, p.dec_deg, start).dm;
    const ddm = ism(start);
    const tau1 = tauAt(start);
    truth.visits.push({
      mjd: start,
      ddm_ism: ddm,
      dm_solar: solar,
      tau_1ghz_us: tau1,
      cube_dm: p.dm + ddm + solar,
    });
    const profileFreqs: number[] = [];
    const cubeReceivers: string[] = [];
    RECEIVERS.forEach((r, ri) => {
      if (r.name === 'low' && rng.uniform() < 0.1) return;
      if (r.name === 'high' && rng.uniform() < 0.4) return;
      cubeReceivers.push(r.name);
      const nprof = PROFILE_SUBBANDS[r.name];
      for (let s = 0; s < nprof; s++)
        profileFreqs.push(r.loMhz + ((s + 0.5) * (r.hiMhz - r.loMhz)) / nprof);
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
        // a template-matched arrival time moves by about the change of τ (its mean delay);
        // the mean τ itself is absorbed by the template and the timing model
        const scatterUs = (tau1 - sc.tau1GhzUs) * (freq / 1000) ** -sc.alpha;
        const signal =
          RECEIVER_OFFSET_US[r.name] + (k.value * 1e6 * (ddm + solar)) / (freq * freq) + scatterUs;
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
    profiles.push(demoProfiles(p, b, start, tau1, profileFreqs, profileRng));
    cubes.push(demoCube(p, b, start, p.dm + ddm + solar, tau1, cubeReceivers, cubeRng));
    const dyn = demoDynspec(p, b, start, tau1, dynRng);
    dynspecs.push(dyn.spectrum);
    truth.visits[truth.visits.length - 1].dynspec = dyn.truth;
  }
  return { toas, truth, profiles, cubes, dynspecs };
}

/**
 * A visit's dynamic spectrum on the pulsar's dynamic-spectrum receiver: scintles of bandwidth
 * Δν_d = C₁/(2π τ) at the band centre (τ from the visit's scattering, C₁ = 1.16) and the
 * pulsar's scintillation time; scintles narrower than a channel are averaged down (their
 * modulation falls as √(Δν_d/channel)), as a real channelised spectrum does. A persistent
 * interference block and, in some visits, a narrow burst and a broadband one.
 */
function demoDynspec(
  p: DemoPulsar,
  b: Behaviour,
  mjd: number,
  tau1GhzUs: number,
  rng: Rng,
): { spectrum: DemoDynspec; truth: NonNullable<DemoTruth['visits'][number]['dynspec']> } {
  const r = RECEIVERS.find((x) => x.name === DYN_RECEIVER[p.source])!;
  const df = (r.hiMhz - r.loMhz) / DYN_CHANNELS;
  const centre = (r.loMhz + r.hiMhz) / 2;
  const tauUs = tau1GhzUs * (centre / 1000) ** -b.scatter.alpha;
  const dnuD = 1.16 / (2 * Math.PI * tauUs);
  const dtD = DYN_DT_D_S[p.source] * (0.8 + 0.4 * rng.uniform());
  const resolved = dnuD >= df;
  const bursts: Array<{ chan0: number; chan1: number; sub0: number; sub1: number; level: number }> =
    [];
  if (rng.uniform() < 0.4) {
    const c0 = rng.int(DYN_CHANNELS - 3);
    const s0 = rng.int(DYN_SUBINTS - 6);
    bursts.push({
      chan0: c0,
      chan1: c0 + 1 + rng.int(2),
      sub0: s0,
      sub1: s0 + 2 + rng.int(4),
      level: 6,
    });
  }
  if (rng.uniform() < 0.2) {
    const s0 = rng.int(DYN_SUBINTS);
    bursts.push({ chan0: 0, chan1: DYN_CHANNELS - 1, sub0: s0, sub1: s0, level: 3 });
  }
  const data = simulateDynspec(
    {
      nchan: DYN_CHANNELS,
      nsub: DYN_SUBINTS,
      f0Mhz: r.loMhz + df / 2,
      dfMhz: df,
      dtS: DYN_SUBINT_S,
      dnuDMhz: Math.max(dnuD, 0.5 * df),
      dtDS: dtD,
      flux: 1,
      modulation: Math.min(1, Math.sqrt(dnuD / df)),
      noise: 0.3,
      persistent: { channels: DYN_PERSISTENT[r.name], level: 3 },
      bursts,
    },
    rng,
  );
  const epoch = normalise({ day: Math.floor(mjd), sec: Math.floor((mjd % 1) * 86400), frac: 0 });
  return {
    spectrum: {
      source: p.source,
      mjd: formatMjd(epoch, 6),
      receiver: r.name,
      f0_mhz: Number((r.loMhz + df / 2).toFixed(6)),
      df_mhz: Number(df.toFixed(6)),
      dt_s: DYN_SUBINT_S,
      nchan: DYN_CHANNELS,
      nsub: DYN_SUBINTS,
      data: Float32Array.from(data),
    },
    truth: { receiver: r.name, dnu_d_mhz: dnuD, dt_d_s: dtD, resolved },
  };
}

/**
 * A visit's profile cube: CUBE_CHANNELS channels across each receiver observed, dedispersed
 * with the catalogue DM while the pulses travelled through `dmTrue`, so the residual
 * dispersion is there to be measured. Channel brightness follows ν^−1.6 times a random
 * scintillation gain; the `low` receiver's interference block and, now and then, one
 * channel hit by a burst are flagged (written as zeros).
 */
function demoCube(
  p: DemoPulsar,
  b: Behaviour,
  mjd: number,
  dmTrue: number,
  tau1GhzUs: number,
  receivers: string[],
  rng: Rng,
): DemoCube {
  const freqs: number[] = [];
  const flagged: number[] = [];
  for (const name of receivers) {
    const r = RECEIVERS.find((x) => x.name === name)!;
    const width = (r.hiMhz - r.loMhz) / CUBE_CHANNELS;
    for (let c = 0; c < CUBE_CHANNELS; c++) {
      if (name === 'low' && CUBE_BAD_LOW.includes(c)) flagged.push(freqs.length);
      freqs.push(Number((r.loMhz + (c + 0.5) * width).toFixed(4)));
    }
  }
  if (rng.uniform() < 0.3) {
    const burst = rng.int(freqs.length);
    if (!flagged.includes(burst)) flagged.push(burst);
  }
  const gains = freqs.map(() => Math.exp(0.4 * rng.normal()));
  const second = b.secondComponent;
  const epoch = normalise({ day: Math.floor(mjd), sec: Math.floor((mjd % 1) * 86400), frac: 0 });
  const { set } = simulateCube(
    {
      source: p.source,
      mjd: formatMjd(epoch, 6),
      periodS: p.period_s,
      nbin: CUBE_NBIN,
      freqsMhz: freqs,
      dmApplied: p.dm,
      dmTrue,
      refFreqMhz: null,
      k: dispersionConstant('conventional').value,
      phase: CUBE_PHASE,
      components: second
        ? [
            { weight: 1 - second.fraction, offset: 0, width: PULSE_WIDTH },
            { weight: second.fraction, offset: second.offset, width: PULSE_WIDTH },
          ]
        : [{ weight: 1, offset: 0, width: PULSE_WIDTH }],
      amplitude: (f, c) => CUBE_PEAK_1GHZ * (f / 1000) ** -1.6 * gains[c],
      scatter: { tau1GhzS: tau1GhzUs * 1e-6, alpha: b.scatter.alpha },
      noise: 1,
      flagged,
    },
    rng,
  );
  const bins = new Float32Array(freqs.length * CUBE_NBIN);
  set.bands.forEach((band, c) => bins.set(band.bins, c * CUBE_NBIN));
  return {
    source: p.source,
    mjd: set.mjd,
    period_s: p.period_s,
    dm: p.dm,
    freqs_mhz: freqs,
    nbin: CUBE_NBIN,
    bins,
  };
}

function demoProfiles(
  p: DemoPulsar,
  b: Behaviour,
  mjd: number,
  tau1GhzUs: number,
  freqs: number[],
  rng: Rng,
): DemoProfiles {
  const nbin = PROFILE_NBIN;
  const bins = new Float32Array(freqs.length * nbin);
  freqs.forEach((f, i) => {
    // a steep flux spectrum, S ∝ ν^−1.6 (common practice for millisecond pulsars)
    const area = PEAK_SNR_1GHZ * PULSE_WIDTH * Math.sqrt(2 * Math.PI) * (f / 1000) ** -1.6;
    const second = b.secondComponent;
    const components = [
      { area: area * (second ? 1 - second.fraction : 1), phase: 0.3, width: PULSE_WIDTH },
    ];
    if (second)
      components.push({
        area: area * second.fraction,
        phase: 0.3 + second.offset,
        width: PULSE_WIDTH,
      });
    const [band] = simulateProfiles(
      {
        nbin,
        freqsMhz: [f],
        tau1GhzPeriods: tau1GhzUs / (p.period_s * 1e6),
        alpha: b.scatter.alpha,
        components: components.map((c) => ({ ...c, area: c.area * nbin })),
        noise: 1,
      },
      rng,
    );
    bins.set(band.bins, i * nbin);
  });
  const epoch = normalise({ day: Math.floor(mjd), sec: Math.floor((mjd % 1) * 86400), frac: 0 });
  return {
    source: p.source,
    mjd: formatMjd(epoch, 6),
    period_s: p.period_s,
    dm: p.dm,
    freqs_mhz: freqs.map((f) => Number(f.toFixed(3))),
    nbin,
    bins,
  };
}

export interface DemoDataSet {
  seed: number;
  pulsars: DemoPulsar[];
  solarN0: number;
  sets: Array<{
    toas: DemoToa[];
    truth: DemoTruth;
    profiles: DemoProfiles[];
    cubes: DemoCube[];
    dynspecs: DemoDynspec[];
  }>;
}

export function simulateDemo(seed = 1): DemoDataSet {
  return {
    seed,
    pulsars: DEMO_PULSARS,
    solarN0: DEMO_SOLAR_N0,
    sets: DEMO_PULSARS.map((p) => simulateDemoPulsar(p, seed)),
  };
}
