import { describe, expect, it } from 'vitest';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { fitDmVisits } from '../../shared/fit/dm-fit.js';
import { createRng } from '../../shared/sim/random.js';
import { makeTable } from '../helpers/toas.js';
import { python, pythonAvailable } from '../helpers/python.js';

const k = dispersionConstant('conventional');

// α fixed: numpy.linalg.lstsq on [1 | K·1e6/ν² | (ν/ν_ref)^−4.4]; α free: scipy curve_fit.
const REF = `
import json, sys
import numpy as np
from scipy.optimize import curve_fit
d = json.load(sys.stdin); K = d["k"]
out = []
for v in d["visits"]:
    f = np.array(v["freq"]); y = np.array(v["res"]); s = np.array(v["err"])
    A = np.column_stack([np.ones_like(f), K * 1e6 / f**2, (f / 1000.0) ** -4.4])
    x, *_ = np.linalg.lstsq(A / s[:, None], y / s, rcond=None)
    model = lambda f, a, dm, S, alpha: a + K * 1e6 * dm / f**2 + S * (f / 1000.0) ** -alpha
    p, cov = curve_fit(model, f, y, p0=[x[0], x[1], x[2], 4.4], sigma=s, absolute_sigma=True, xtol=1e-15, ftol=1e-15, gtol=1e-15, maxfev=100000)
    out.append({"fixed": x.tolist(), "free": p.tolist(), "free_err": np.sqrt(np.diag(cov)).tolist()})
print(json.dumps(out))
`;

describe.skipIf(!pythonAvailable)(
  'chromatic fit against numpy.linalg.lstsq and scipy.optimize.curve_fit',
  () => {
    it('α fixed: DM and τ_ref equal lstsq to 1e-9; α free: DM, τ_ref, α equal curve_fit to 1e-6', () => {
      const rng = createRng(55);
      const rows: Array<Record<string, string | number>> = [];
      const visits: Array<{ freq: number[]; res: number[]; err: number[] }> = [];
      for (let v = 0; v < 10; v++) {
        const freq = [550, 620, 700, 800, 900, 1150, 1300, 1500, 1750, 2200, 2800, 3400];
        const dm = 2e-3 * rng.normal();
        const tau = 30 + 20 * rng.uniform();
        const alpha = 3.8 + 0.8 * rng.uniform();
        const visit = { freq, res: [] as number[], err: [] as number[] };
        freq.forEach((f, i) => {
          const err = 0.5 + rng.uniform();
          const res =
            2 + (k.value * 1e6 * dm) / f ** 2 + tau * (f / 1000) ** -alpha + err * rng.normal();
          rows.push({
            source: 'REF-3',
            mjd: `${60000 + 5 * v}.${100 + i}`,
            freq_mhz: f,
            err_us: err,
            residual_us: res,
          });
          visit.res.push(res);
          visit.err.push(err);
        });
        visits.push(visit);
      }
      const table = makeTable(rows);
      const base = { constant: k, grouping: { kind: 'gap' as const, gapDays: 0.5 }, evolution: 0 };
      const fixed = fitDmVisits(table, { ...base, scatter: 'fixed' });
      const free = fitDmVisits(table, { ...base, scatter: 'free' });
      const ref = python<Array<{ fixed: number[]; free: number[]; free_err: number[] }>>(REF, {
        k: k.value,
        visits,
      });
      ref.forEach((r, i) => {
        expect(Math.abs(fixed[i].dm! / r.fixed[1] - 1)).toBeLessThan(1e-9);
        expect(Math.abs(fixed[i].tau_ref_us! / r.fixed[2] - 1)).toBeLessThan(1e-9);
        expect(Math.abs(free[i].dm! - r.free[1])).toBeLessThan(
          1e-6 * Math.abs(r.free[1]) + 1e-6 * r.free_err[1],
        );
        expect(Math.abs(free[i].tau_ref_us! / r.free[2] - 1)).toBeLessThan(1e-6);
        expect(Math.abs(free[i].alpha! / r.free[3] - 1)).toBeLessThan(1e-6);
        expect(Math.abs(free[i].alpha_err! / r.free_err[3] - 1)).toBeLessThan(1e-4);
      });
    });
  },
);
