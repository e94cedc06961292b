import FFT from 'fft.js';
import { Fft2, nextPow2 } from '../dsp/fft2.js';
import type { Rng } from './random.js';

/**
 * Simulated dynamic spectra (demo data, tests, benchmarks). The scintillating field E(ν, t) is a
 * circular complex Gaussian field with a separable correlation γ(δν, δt) = γ_ν(δν)·γ_t(δt),
 * made by filtering complex white noise with √(FFT of γ) on a grid padded well beyond the
 * correlation lengths (so nothing wraps), then cropped. The intensity |E|² then has the
 * autocovariance |γ|² (a property of circular complex Gaussian fields), chosen here as
 *   frequency  |γ_ν|² = 1/(1 + (δν/Δν_d)²)   → half width at half maximum Δν_d,
 *   time       |γ_t|² = exp(−(δt/Δt_d)²)     → half width at 1/e Δt_d,
 * the shapes Sightline fits. Intensity = flux·|E|² + white noise, plus injected interference.
 */
export interface ScintSimSpec {
  nchan: number;
  nsub: number;
  f0Mhz: number;
  dfMhz: number;
  dtS: number;
  dnuDMhz: number;
  dtDS: number;
  /** mean pulsar flux (intensity units) and per-pixel noise σ */
  flux: number;
  /** scintle modulation m: intensity = flux·(1 + m(|E|² − 1)); 1 (default) = full */
  modulation?: number;
  noise: number;
  /** channels with persistent interference: a strong, fluctuating extra level */
  persistent?: { channels: number[]; level: number };
  /** intermittent bursts: rectangles of extra intensity */
  bursts?: Array<{ chan0: number; chan1: number; sub0: number; sub1: number; level: number }>;
}

/** Filter amplitude √S_k for one axis: S = FFT of the field correlation on a circular grid. */
function axisFilter(n: number, gamma: (lag: number) => number): Float64Array {
  const fft = new FFT(n);
  const g = new Float64Array(2 * n);
  for (let j = 0; j < n; j++) g[2 * j] = gamma(Math.min(j, n - j));
  const s = new Float64Array(2 * n);
  fft.transform(s, g);
  return Float64Array.from({ length: n }, (_, k) => Math.sqrt(Math.max(s[2 * k], 0)));
}

export function simulateDynspec(spec: ScintSimSpec, rng: Rng): Float64Array {
  const { nchan, nsub } = spec;
  // pad by many correlation lengths (the Lorentzian's field correlation falls slowly)
  const padF = nextPow2(nchan + Math.min(4096, Math.ceil((16 * spec.dnuDMhz) / spec.dfMhz)));
  const padT = nextPow2(nsub + Math.ceil((4 * spec.dtDS) / spec.dtS));
  const wf = spec.dnuDMhz / spec.dfMhz;
  const wt = spec.dtDS / spec.dtS;
  const hf = axisFilter(padF, (j) => 1 / Math.sqrt(1 + (j / wf) ** 2));
  const ht = axisFilter(padT, (j) => Math.exp(-((j / wt) ** 2) / 2));
  const a = new Float64Array(2 * padF * padT);
  const scale = 1 / Math.sqrt(padF * padT);
  for (let k = 0; k < padF; k++)
    for (let l = 0; l < padT; l++) {
      const amp = hf[k] * ht[l] * scale * Math.SQRT1_2;
      const i = 2 * (k * padT + l);
      a[i] = amp * rng.normal();
      a[i + 1] = amp * rng.normal();
    }
  // fft.js's inverse divides by the size; undo that so E has unit variance
  new Fft2(padF, padT).transform(a, true);
  const norm = padF * padT;
  const out = new Float64Array(nchan * nsub);
  const m = spec.modulation ?? 1;
  for (let c = 0; c < nchan; c++)
    for (let t = 0; t < nsub; t++) {
      const i = 2 * (c * padT + t);
      const er = a[i] * norm;
      const ei = a[i + 1] * norm;
      out[c * nsub + t] = spec.flux * (1 + m * (er * er + ei * ei - 1)) + spec.noise * rng.normal();
    }
  if (spec.persistent)
    for (const c of spec.persistent.channels)
      for (let t = 0; t < nsub; t++)
        out[c * nsub + t] += spec.persistent.level * (1 + Math.abs(rng.normal()));
  for (const b of spec.bursts ?? [])
    for (let c = b.chan0; c <= b.chan1; c++)
      for (let t = b.sub0; t <= b.sub1; t++) out[c * nsub + t] += b.level;
  return out;
}

/**
 * A dynamic spectrum from a one-dimensional thin screen: an undeflected core image and a halo
 * of images j with Doppler frequency f_j (mHz) and delay τ_j = η·f_j² (µs), amplitudes from a
 * Gaussian envelope in f_j of width `fWidthMhz` (times `halo`), random phases; E(ν, t) = Σ_j a_j e^(2πi(τ_j (ν − ν₀) + f_j t)), so the secondary
 * spectrum holds the parabolic arc f_τ = η f_t² (Stinebring et al. 2001, from memory) by
 * construction. Intensity = flux·|E|²/Σ|a_j|² + white noise.
 */
export interface ScreenSimSpec {
  nchan: number;
  nsub: number;
  f0Mhz: number;
  dfMhz: number;
  dtS: number;
  etaS3: number;
  fWidthMhz: number;
  images: number;
  /** amplitude of the scattered images relative to the undeflected core */
  halo: number;
  flux: number;
  noise: number;
}

export function simulateScreenDynspec(spec: ScreenSimSpec, rng: Rng): Float64Array {
  const { nchan, nsub, images } = spec;
  const nu0 = spec.f0Mhz + (spec.dfMhz * (nchan - 1)) / 2;
  const ar = new Float64Array(images);
  const ai = new Float64Array(images);
  const tau = new Float64Array(images);
  const fd = new Float64Array(images);
  let power = 0;
  for (let j = 0; j < images; j++) {
    // image 0 is the undeflected core; the others form the scattered halo, whose interference
    // with the core draws the arc
    const f = j === 0 ? 0 : spec.fWidthMhz * rng.normal() * 2;
    const amp = j === 0 ? 1 : spec.halo * Math.exp(-0.5 * (f / spec.fWidthMhz) ** 2);
    const ph = 2 * Math.PI * rng.uniform();
    ar[j] = amp * Math.cos(ph);
    ai[j] = amp * Math.sin(ph);
    fd[j] = f;
    tau[j] = spec.etaS3 * f * f;
    power += amp * amp;
  }
  const out = new Float64Array(nchan * nsub);
  // E = U·V with U_cj = a_j e^(2πi τ_j (ν_c − ν₀)) and V_jt = e^(2πi f_j t): ν in MHz with τ
  // in µs, and f in mHz with t in s (×1e-3)
  const ur = new Float64Array(images);
  const ui = new Float64Array(images);
  for (let c = 0; c < nchan; c++) {
    const dnu = spec.f0Mhz + c * spec.dfMhz - nu0;
    for (let j = 0; j < images; j++) {
      const ang = 2 * Math.PI * tau[j] * dnu;
      ur[j] = ar[j] * Math.cos(ang) - ai[j] * Math.sin(ang);
      ui[j] = ar[j] * Math.sin(ang) + ai[j] * Math.cos(ang);
    }
    for (let t = 0; t < nsub; t++) {
      let er = 0;
      let ei = 0;
      const time = t * spec.dtS * 1e-3;
      for (let j = 0; j < images; j++) {
        const ang = 2 * Math.PI * fd[j] * time;
        const cr = Math.cos(ang);
        const ci = Math.sin(ang);
        er += ur[j] * cr - ui[j] * ci;
        ei += ur[j] * ci + ui[j] * cr;
      }
      out[c * nsub + t] = (spec.flux * (er * er + ei * ei)) / power + spec.noise * rng.normal();
    }
  }
  return out;
}
