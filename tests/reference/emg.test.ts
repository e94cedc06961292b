import { describe, expect, it } from 'vitest';
import { emg, periodicEmg, smallTauDerivatives, type EmgTerms } from '../../shared/profiles/emg.js';
import { python, pythonAvailable } from '../helpers/python.js';

const terms = (): EmgTerms => ({ f: 0, dfdu: 0, dfds: 0, dfdt: 0 });

describe.skipIf(!pythonAvailable)(
  'scattered Gaussian against scipy.stats.exponnorm (Debian python3-scipy)',
  () => {
    it('equals exponnorm(K=τ/σ, loc=μ, scale=σ).pdf to 1e-10 relative for τ, σ ≪ P, including τ ≪ σ', () => {
      const P = 1024;
      const cases = [
        { sigma: 8, tau: 20 },
        { sigma: 10, tau: 0.5 },
        { sigma: 5, tau: 0.01 },
        { sigma: 3, tau: 40 },
        { sigma: 20, tau: 20 },
      ];
      const us = [-60, -25, -10, -3, 0, 1.5, 4, 9, 17, 30, 55, 90, 150];
      const ref = python<number[][]>(
        `
import json, sys
from scipy.stats import exponnorm
d = json.load(sys.stdin)
print(json.dumps([[float(exponnorm.pdf(u, K=c["tau"]/c["sigma"], loc=0, scale=c["sigma"])) for u in d["us"]] for c in d["cases"]]))`,
        { cases, us },
      );
      const out = terms();
      cases.forEach((c, i) =>
        us.forEach((u, j) => {
          const r = ref[i][j];
          if (r < 1e-250) return; // both underflow far in the tails
          expect(
            Math.abs(emg(u, c.sigma, c.tau) / r - 1),
            `σ=${c.sigma} τ=${c.tau} u=${u}`,
          ).toBeLessThan(1e-10);
          // near the pulse, the wrapped tail of the previous rotation (≤ e^(−P/τ)/τ ≈ 2e-13 here)
          // is negligible, so the periodic sum equals the single pulse
          if (r > 1e-3)
            expect(Math.abs(periodicEmg(u, c.sigma, c.tau, P, out).f / r - 1)).toBeLessThan(1e-10);
        }),
      );
    });
  },
);

describe('periodic scattered Gaussian', () => {
  it('conserves the pulse area for τ ≳ P (the tail wraps into the next rotations)', () => {
    const out = terms();
    for (const [sigma, tau] of [
      [4, 300],
      [10, 2000],
      [2, 50000],
      [30, 0.02],
    ]) {
      const P = 512;
      let area = 0;
      for (let t = 0; t < P; t++) area += periodicEmg(t - 100, sigma, tau, P, out).f;
      expect(Math.abs(area - 1), `σ=${sigma} τ=${tau}`).toBeLessThan(1e-9);
    }
  });

  it('analytic derivatives match central finite differences', () => {
    const a = terms();
    const b = terms();
    const P = 256;
    for (const [u, s, t] of [
      [3, 5, 8],
      [-7, 4, 1.2],
      [40, 6, 150],
      [100, 3, 30],
      [-120, 8, 600],
    ]) {
      const base = { ...periodicEmg(u, s, t, P, a) };
      const h = 1e-5;
      const num = (fn: (d: number) => number) => (fn(h) - fn(-h)) / (2 * h);
      const dU = num((d) => periodicEmg(u + d, s, t, P, b).f);
      const dS = num((d) => periodicEmg(u, s + d, t, P, b).f);
      const dT = num((d) => periodicEmg(u, s, t + d, P, b).f);
      const scale = Math.abs(base.f) / Math.min(s, t) + 1e-12;
      expect(Math.abs(base.dfdu - dU)).toBeLessThan(1e-6 * scale);
      expect(Math.abs(base.dfds - dS)).toBeLessThan(1e-6 * scale);
      expect(Math.abs(base.dfdt - dT)).toBeLessThan(1e-6 * scale);
    }
  });
});

describe('derivatives for τ ≪ σ (series instead of a cancelling closed form)', () => {
  it('the series matches the closed form where both are accurate (τ/σ = 0.02), and finite differences below', () => {
    const a = { f: 0, dfdu: 0, dfds: 0, dfdt: 0 };
    const b = { f: 0, dfdu: 0, dfds: 0, dfdt: 0 };
    const P = 4096;
    const sigma = 30;
    // closed form at τ/σ = 0.02: its cancellation error is ~1e-16·(σ/τ)³ ≈ 1e-11
    for (const u of [-50, -20, -5, 3, 17, 44]) {
      const tau = 0.02 * sigma;
      const closed = periodicEmg(u, sigma, tau, P, a);
      const phi = Math.exp(-0.5 * (u / sigma) ** 2) / (sigma * Math.sqrt(2 * Math.PI));
      const series = smallTauDerivatives(u / sigma, sigma, tau, phi);
      const scale = phi / sigma;
      // the series drops terms of order 4(τ/σ)³ times a polynomial in u/σ (≲ 10 here): ≲ 3e-4
      // of the derivative's scale at τ/σ = 0.02 (it takes over only below 0.01)
      expect(Math.abs(series.dfdt - closed.dfdt)).toBeLessThan(1e-3 * scale);
      expect(Math.abs(series.dfds - closed.dfds)).toBeLessThan(1e-3 * scale);
    }
    // below the switch (τ/σ = 1e-3 / 30) the derivatives in use match central differences in τ
    for (const u of [-40, -10, 0, 12, 35]) {
      const tau = 1e-3;
      const d = periodicEmg(u, sigma, tau, P, a);
      const h = 1e-4;
      const fd =
        (periodicEmg(u, sigma, tau + h, P, b).f - periodicEmg(u, sigma, tau - h, P, b).f) / (2 * h);
      expect(Math.abs(d.dfdt - fd)).toBeLessThan(1e-6 * (Math.abs(fd) + 1e-6));
    }
  });
});
