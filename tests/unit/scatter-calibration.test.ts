import { describe, expect, it } from 'vitest';
import { analyseScattering } from '../../shared/profiles/analyse.js';
import { createRng } from '../../shared/sim/random.js';
import { simulateProfiles } from '../../shared/sim/profiles.js';

/** science.md "Calibration of uncertainties": fraction within 1σ in 0.683 ± 3·√(0.683·0.317/N). */
function expectCalibrated(hits: number, n: number) {
  const band = 3 * Math.sqrt((0.683 * 0.317) / n);
  expect(hits / n).toBeGreaterThan(0.683 - band);
  expect(hits / n).toBeLessThan(0.683 + band);
}

describe('injection–recovery: τ and α uncertainties are calibrated', () => {
  it('200 seeded visits × 4 bands: τ per band and α from the power law', () => {
    const rng = createRng(4242);
    const nbin = 256;
    const freqs = [600, 750, 950, 1250];
    let tauHits = 0;
    let tauN = 0;
    let alphaHits = 0;
    let alphaN = 0;
    for (let v = 0; v < 200; v++) {
      const alpha = 3.6 + 1.2 * rng.uniform();
      const tau1 = 0.01 + 0.02 * rng.uniform();
      const spec = {
        nbin,
        freqsMhz: freqs,
        tau1GhzPeriods: tau1,
        alpha,
        components: [
          { area: 60 * nbin * 0.012 * 2.5066, phase: 0.2 + 0.5 * rng.uniform(), width: 0.012 },
        ],
        noise: 1,
      };
      const bands = simulateProfiles(spec, rng);
      const r = analyseScattering(
        {
          source: 'CAL',
          mjd: '60000.5',
          periodS: 0.005,
          bands: bands.map((b) => ({ freqMhz: b.freqMhz, bins: b.bins })),
        },
        { model: 'gauss', refFreqMhz: 1000 },
      );
      const usPerBin = (0.005 * 1e6) / nbin;
      r.bands.forEach((b, i) => {
        if (b.status !== 'fitted') return;
        tauN++;
        if (Math.abs(b.tau_us - bands[i].tauBins * usPerBin) <= b.tau_err_us!) tauHits++;
      });
      if (r.power_law && r.power_law.n_bands >= 3 && r.power_law.alpha_err !== null) {
        alphaN++;
        if (Math.abs(r.power_law.alpha - alpha) <= r.power_law.alpha_err) alphaHits++;
      }
    }
    expect(tauN).toBeGreaterThanOrEqual(200);
    expect(alphaN).toBeGreaterThanOrEqual(200 * 0.9);
    expectCalibrated(tauHits, tauN);
    expectCalibrated(alphaHits, alphaN);
  });
});

describe('no scattering, no detection', () => {
  it('profiles with τ far below the pulse width are reported as upper limits, not measurements', () => {
    const rng = createRng(777);
    let fitted = 0;
    let coveredByLimit = 0;
    const N = 120;
    for (let i = 0; i < N; i++) {
      const width = 0.01 + 0.01 * rng.uniform();
      const [band] = simulateProfiles(
        {
          nbin: 512,
          freqsMhz: [3000],
          tau1GhzPeriods: (1e-4 * 3000 ** 4.4) / 1000 ** 4.4,
          alpha: 4.4,
          components: [
            { area: (20 + 80 * rng.uniform()) * 512 * width * 2.5066, phase: 0.5, width },
          ],
          noise: 1,
        },
        rng,
      );
      const r = analyseScattering(
        {
          source: 'NULL',
          mjd: '60000.5',
          periodS: 0.005,
          bands: [{ freqMhz: 3000, bins: band.bins, noise: 1 }],
        },
        { model: 'gauss', refFreqMhz: 1000, alpha: 4.4 },
      );
      const b = r.bands[0];
      if (b.status === 'fitted') fitted++;
      else if (b.tau_upper_us! >= band.tauBins * ((0.005 * 1e6) / 512)) coveredByLimit++;
    }
    // a 3σ likelihood-ratio threshold: false detections should be rare (expected well below 1 %)
    expect(fitted / N).toBeLessThan(0.05);
    expect(coveredByLimit).toBe(N - fitted);
  });
});
