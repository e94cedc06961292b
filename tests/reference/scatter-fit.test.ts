import { describe, expect, it } from 'vitest';
import { fitProfileBand } from '../../shared/profiles/scatter-fit.js';
import { createRng } from '../../shared/sim/random.js';
import { simulateProfiles } from '../../shared/sim/profiles.js';
import { python, pythonAvailable } from '../helpers/python.js';

// The same model in scipy: baseline + area × Σ_k exponnorm.pdf(t + kP), k over enough images
// for the tail to wrap (e^(−kP/τ) below 1e-17), fitted by curve_fit (Levenberg–Marquardt).
const CURVE_FIT = `
import json, sys
import numpy as np
from scipy.stats import exponnorm
from scipy.optimize import curve_fit
d = json.load(sys.stdin)
out = []
for case in d["cases"]:
    y = np.array(case["bins"]); n = len(y); t = np.arange(n, dtype=float)
    kmax = int(np.ceil(40 * case["start"][1] / n)) + 3
    def model(t, b, tau, area, mu, sigma):
        v = np.zeros_like(t)
        for k in range(-2, kmax + 1):
            v += exponnorm.pdf(t + k * n, K=tau / sigma, loc=mu, scale=sigma)
        return b + area * v
    p, cov = curve_fit(model, t, y, p0=case["start"], sigma=np.full(n, case["noise"]), xtol=1e-14, ftol=1e-14, gtol=1e-14, maxfev=20000)
    out.append({"params": p.tolist(), "errors": np.sqrt(np.diag(cov)).tolist()})
print(json.dumps(out))
`;

describe.skipIf(!pythonAvailable)(
  'τ per band against scipy.optimize.curve_fit (Debian python3-scipy)',
  () => {
    it('the same model on the same data gives the same τ to 1e-4 relative, and the same error to 1e-3', () => {
      const rng = createRng(31);
      const nbin = 256;
      const specs = [
        { freq: 700, tau: 0.03, width: 0.012, noise: 1 },
        { freq: 1000, tau: 0.01, width: 0.015, noise: 1 },
        { freq: 600, tau: 0.12, width: 0.01, noise: 0.5 },
        { freq: 900, tau: 0.02, width: 0.03, noise: 1 },
      ];
      const cases = specs.map((s) => {
        const [band] = simulateProfiles(
          {
            nbin,
            freqsMhz: [s.freq],
            tau1GhzPeriods: s.tau * (s.freq / 1000) ** 4.4,
            alpha: 4.4,
            components: [{ area: 80 * nbin * s.width * 2.5, phase: 0.35, width: s.width }],
            noise: s.noise,
            baseline: 3,
          },
          rng,
        );
        const fit = fitProfileBand(band.bins, { model: 'gauss', noise: s.noise });
        return {
          fit,
          bins: Array.from(band.bins),
          noise: s.noise,
          start: [3, band.tauBins, 80 * nbin * s.width * 2.5, 0.35 * nbin, s.width * nbin],
        };
      });
      const ref = python<Array<{ params: number[]; errors: number[] }>>(CURVE_FIT, {
        cases: cases.map(({ bins, noise, start }) => ({ bins, noise, start })),
      });
      cases.forEach(({ fit }, i) => {
        expect(fit.status).toBe('fitted');
        expect(Math.abs(fit.tauBins / ref[i].params[1] - 1), `case ${i}`).toBeLessThan(1e-4);
        expect(Math.abs(fit.tauErrBins / ref[i].errors[1] - 1), `case ${i}`).toBeLessThan(1e-3);
      });
    });
  },
);
