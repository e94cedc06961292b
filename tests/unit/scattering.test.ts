import { describe, expect, it } from 'vitest';
import { alphaFromBeta, expectedTauUs, KOLMOGOROV_ALPHA } from '../../shared/profiles/empirical.js';
import { fitPowerLaw } from '../../shared/profiles/power-law.js';
import { fitProfileBand } from '../../shared/profiles/scatter-fit.js';
import { gaussModel, templateModel } from '../../shared/profiles/models.js';
import { analyseScattering } from '../../shared/profiles/analyse.js';
import { createRng } from '../../shared/sim/random.js';
import { simulateProfiles } from '../../shared/sim/profiles.js';

describe('empirical relations', () => {
  it('τ–DM relation check values (Bhat et al. 2004, from memory; science.md)', () => {
    expect(expectedTauUs(100, 1000) / 1000).toBeCloseTo(0.013428, 6);
    expect(expectedTauUs(300, 1000) / 1000).toBeCloseTo(3.07, 3);
    // τ ∝ ν^−3.86 in the relation
    expect(expectedTauUs(100, 2000) / expectedTauUs(100, 1000)).toBeCloseTo(2 ** -3.86, 12);
  });

  it('Kolmogorov turbulence: α = 2β/(β − 2) = 4.4 for β = 11/3; a square-law medium gives 4 (common practice)', () => {
    expect(KOLMOGOROV_ALPHA).toBeCloseTo(4.4, 12);
    expect(alphaFromBeta(4)).toBe(4);
  });
});

describe('τ(ν) power law', () => {
  it('recovers τ_ref and α exactly from noiseless points, and holds α when fixed', () => {
    const pts = [600, 800, 1200, 2000].map((f) => ({
      freqMhz: f,
      tauUs: 50 * (f / 1000) ** -4.1,
      tauErrUs: 1,
    }));
    const free = fitPowerLaw(pts, 1000);
    expect(free.alpha).toBeCloseTo(4.1, 10);
    expect(free.tau_ref_us).toBeCloseTo(50, 8);
    const fixed = fitPowerLaw(pts, 1000, 4.1);
    expect(fixed.alpha_err).toBeNull();
    expect(fixed.tau_ref_us).toBeCloseTo(50, 8);
  });

  it('refuses α from a single band with a clear message', () => {
    expect(() => fitPowerLaw([{ freqMhz: 800, tauUs: 10, tauErrUs: 1 }], 1000)).toThrow(
      /α needs τ in at least two bands/,
    );
  });
});

describe('scattering fits on profiles', () => {
  it('recovers τ with a Gaussian model and reports a weak τ as an upper limit', () => {
    const rng = createRng(8);
    const [strong, weak] = simulateProfiles(
      {
        nbin: 512,
        freqsMhz: [700, 3000],
        tau1GhzPeriods: 0.03,
        alpha: 4.4,
        components: [{ area: 300 * 512, phase: 0.3, width: 0.01 }],
        noise: 2,
      },
      rng,
    );
    const s = fitProfileBand(strong.bins, { model: 'gauss', noise: 2 });
    expect(s.status).toBe('fitted');
    expect(Math.abs(s.tauBins - strong.tauBins)).toBeLessThan(4 * s.tauErrBins);
    const w = fitProfileBand(weak.bins, { model: 'gauss', noise: 2 });
    expect(w.status).toBe('upper_limit');
    expect(w.tauUpperBins).toBeGreaterThan(weak.tauBins);
  });

  it('a template scattered in the Fourier domain recovers τ and the shift', () => {
    const nbin = 256;
    const rng = createRng(9);
    const template = new Float64Array(nbin);
    gaussModel(2, nbin).evaluate([0, 0.01, 100, 80, 3, 40, 90, 2], template);
    const truth = [1.5, 12, 2.5, 7.25];
    const data = new Float64Array(nbin);
    templateModel(template).evaluate(truth, data);
    for (let i = 0; i < nbin; i++) data[i] += 0.05 * rng.normal();
    const fit = fitProfileBand(data, { model: 'template', template, noise: 0.05 });
    expect(fit.status).toBe('fitted');
    expect(Math.abs(fit.tauBins - 12)).toBeLessThan(4 * fit.tauErrBins);
    expect(Math.abs(fit.params[3] - 7.25)).toBeLessThan(4 * fit.errors[3]);
  });

  it('template model Jacobian matches finite differences', () => {
    const nbin = 64;
    const template = new Float64Array(nbin);
    gaussModel(1, nbin).evaluate([0, 0.5, 30, 20, 2], template);
    const m = templateModel(template);
    const p = [0.3, 4, 1.7, 2.5];
    const jac = new Float64Array(nbin * 4);
    const out = new Float64Array(nbin);
    m.evaluate(p, out, jac);
    const a = new Float64Array(nbin);
    const b = new Float64Array(nbin);
    for (let j = 0; j < 4; j++) {
      const h = 1e-6;
      const pp = p.slice();
      const pm = p.slice();
      pp[j] += h;
      pm[j] -= h;
      m.evaluate(pp, a);
      m.evaluate(pm, b);
      for (let i = 0; i < nbin; i++)
        expect(Math.abs((a[i] - b[i]) / (2 * h) - jac[i * 4 + j])).toBeLessThan(1e-5);
    }
  });

  it('one band with α free is refused with a clear message; α fixed works', () => {
    const rng = createRng(3);
    const [band] = simulateProfiles(
      {
        nbin: 256,
        freqsMhz: [700],
        tau1GhzPeriods: 0.02,
        alpha: 4.4,
        components: [{ area: 2000, phase: 0.4, width: 0.012 }],
        noise: 1,
      },
      rng,
    );
    const set = {
      source: 'TEST-1',
      mjd: '60000.5',
      periodS: 0.004,
      bands: [{ freqMhz: 700, bins: band.bins }],
    };
    expect(() => analyseScattering(set, { model: 'gauss', refFreqMhz: 1000 })).toThrow(
      /α cannot be fitted from a single band/,
    );
    const r = analyseScattering(set, { model: 'gauss', refFreqMhz: 1000, alpha: 4.4 });
    expect(r.power_law?.alpha_fixed).toBe(true);
  });
});

describe('no false measurements', () => {
  it('pure noise: no band is reported as a measured τ', () => {
    const rng = createRng(21);
    let fitted = 0;
    for (let k = 0; k < 40; k++) {
      const bins = Float64Array.from({ length: 256 }, () => rng.normal());
      if (fitProfileBand(bins, { model: 'gauss', noise: 1 }).status === 'fitted') fitted++;
    }
    expect(fitted).toBe(0);
  });

  it('a template fitted against itself finds no scattering', () => {
    const nbin = 256;
    const rng = createRng(22);
    const template = new Float64Array(nbin);
    gaussModel(1, nbin).evaluate([0, 0.01, 400, 70, 3], template);
    const data = Float64Array.from(template, (v) => v + 0.5 * rng.normal());
    const fit = fitProfileBand(data, { model: 'template', template, noise: 0.5 });
    expect(fit.status).toBe('upper_limit');
    expect(Math.abs(fit.params[3])).toBeLessThan(0.5); // shift
  });

  it('scattering far longer than the period is never reported as "not detected"', () => {
    const rng = createRng(23);
    const nbin = 256;
    for (const tauPeriods of [2, 4]) {
      const bins = new Float64Array(nbin);
      gaussModel(1, nbin).evaluate([0, tauPeriods * nbin, 3000, 80, 4], bins);
      for (let i = 0; i < nbin; i++) bins[i] += rng.normal();
      const fit = fitProfileBand(bins, { model: 'gauss', noise: 1 });
      expect(fit.status, `τ = ${tauPeriods} P`).not.toBe('upper_limit');
      if (fit.status === 'fitted')
        expect(Math.abs(fit.tauBins - tauPeriods * nbin)).toBeLessThan(4 * fit.tauErrBins);
    }
  });

  it('integer-valued (quantised) profiles still get a finite noise estimate', () => {
    const rng = createRng(24);
    const bins = new Float64Array(256);
    gaussModel(1, 256).evaluate([10, 5, 800, 100, 4], bins);
    for (let i = 0; i < 256; i++) bins[i] = Math.round(bins[i] + 0.3 * rng.normal());
    const fit = fitProfileBand(bins, { model: 'gauss' });
    expect(fit.noise).toBeGreaterThan(0);
    expect(Number.isFinite(fit.snr)).toBe(true);
  });
});
