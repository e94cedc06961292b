import { describe, expect, it } from 'vitest';
import { fitGp } from '../../shared/series/gp.js';
import { createRng } from '../../shared/sim/random.js';
import { python, pythonAvailable } from '../helpers/python.js';

function series(seed: number, n = 60) {
  const rng = createRng(seed);
  const t: number[] = [];
  const y: number[] = [];
  const err: number[] = [];
  const truth = (x: number) => 3e-4 * Math.sin(x / 90) + 1e-4 * Math.cos(x / 31);
  for (let i = 0; i < n; i++) {
    const x = 60000 + i * 14 + 3 * rng.uniform();
    const e = 3e-5 * (1 + rng.uniform());
    t.push(x);
    err.push(e);
    y.push(truth(x) + e * rng.normal());
  }
  return { t, y, err, truth };
}

// Rasmussen & Williams 2006, Algorithm 2.1, written independently with numpy's Cholesky
const GP_NUMPY = `
import json, sys
import numpy as np
d = json.load(sys.stdin)
t = np.array(d["t"]); y = np.array(d["y"]); e = np.array(d["err"]); s = np.array(d["s"])
def parts(A, l, w):
    K = A*A*np.exp(-(t[:, None]-t[None, :])**2/(2*l*l)) + np.diag(e*e + w*w)
    L = np.linalg.cholesky(K)
    Ki = np.linalg.inv(K)
    one = np.ones_like(t)
    m = (one @ Ki @ y) / (one @ Ki @ one)
    r = y - m
    ll = -0.5*r @ Ki @ r - np.log(np.diag(L)).sum() - 0.5*len(t)*np.log(2*np.pi)
    return K, Ki, m, ll, one
A, l, w = d["A"], d["l"], d["w"]
K, Ki, m, ll, one = parts(A, l, w)
ks = A*A*np.exp(-(s[:, None]-t[None, :])**2/(2*l*l))
mean = m + ks @ Ki @ (y - m)
rr = 1 - ks @ Ki @ one
var = A*A - np.einsum("ij,jk,ik->i", ks, Ki, ks) + rr*rr/(one @ Ki @ one)
near = [parts(A*f1, l*f2, w)[3] for f1, f2 in [(1.1, 1), (0.9, 1), (1, 1.1), (1, 0.9)]]
print(json.dumps({"ll": ll, "mean": mean.tolist(), "sd": np.sqrt(var).tolist(), "near": near}))
`;

describe.skipIf(!pythonAvailable)(
  'Gaussian-process smoothing against a numpy implementation of R&W Algorithm 2.1',
  () => {
    it('log marginal likelihood, posterior mean and 1σ agree; the fitted point is a maximum', () => {
      const { t, y, err } = series(11);
      const gp = fitGp(t, y, err);
      const s = [60010, 60300.5, 60555, 60800];
      const ref = python<{ ll: number; mean: number[]; sd: number[]; near: number[] }>(GP_NUMPY, {
        t,
        y,
        err,
        s,
        A: gp.amplitude,
        l: gp.lengthDays,
        w: gp.white,
      });
      expect(Math.abs(gp.logLikelihood - ref.ll)).toBeLessThan(1e-6 * Math.abs(ref.ll));
      const p = gp.predict(s);
      s.forEach((_, i) => {
        expect(Math.abs(p.mean[i] - ref.mean[i])).toBeLessThan(
          1e-9 * 3e-4 + 1e-7 * Math.abs(ref.mean[i]),
        );
        expect(Math.abs(p.sd[i] / ref.sd[i] - 1)).toBeLessThan(1e-6);
      });
      for (const other of ref.near) expect(other).toBeLessThan(ref.ll + 1e-9);
    });
  },
);

describe('Gaussian-process smoothing recovers a smooth DM wander', () => {
  it('the 1σ band covers the injected curve about 68 % of the time (20 seeded series)', () => {
    let inside = 0;
    let total = 0;
    for (let seed = 1; seed <= 20; seed++) {
      const { t, y, err, truth } = series(seed);
      const gp = fitGp(t, y, err);
      const grid = t.filter((_, i) => i % 3 === 0);
      const p = gp.predict(grid);
      grid.forEach((x, i) => {
        total++;
        if (Math.abs(p.mean[i] - truth(x)) <= p.sd[i]) inside++;
      });
    }
    // a loose band: grid points within one series are correlated, so the effective N is small
    expect(inside / total).toBeGreaterThan(0.5);
    expect(inside / total).toBeLessThan(0.9);
  });
});
