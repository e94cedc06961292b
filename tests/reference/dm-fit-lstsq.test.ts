import { describe, expect, it } from 'vitest';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { fitDmVisits } from '../../shared/fit/dm-fit.js';
import { createRng } from '../../shared/sim/random.js';
import { simulateResidualVisit, type SimToa } from '../../shared/sim/visits.js';
import { addSeconds, formatMjd, parseMjd } from '../../shared/time/mjd.js';
import { makeTable } from '../helpers/toas.js';
import { python, pythonAvailable } from '../helpers/python.js';

const k = dispersionConstant('conventional');

/** numpy.linalg.lstsq on the whitened design [receiver offsets | K·1e6/ν² | log10(ν/GHz)^e]. */
const LSTSQ = `
import json, sys
import numpy as np
from decimal import Decimal
req = json.load(sys.stdin)
K = req["k"]
out = []
for v in req["visits"]:
    f = np.array(v["freq"], float); s = np.array(v["err"], float)
    if "res" in v:
        y = np.array(v["res"], float)
    else:
        # arrival times: exact decimal offsets from the highest-frequency arrival, folded mod P
        t = [Decimal(m) for m in v["mjd"]]
        ref = t[int(np.argmax(f))]
        o = np.array([float((ti - ref) * 86400) for ti in t])
        P = v["period"]
        o = o - P * np.floor((o + P / 4) / P)
        y = o * 1e6
    rcv = v.get("rcv") or [""] * len(f)
    names = sorted(set(rcv), key=rcv.index)
    cols = [np.array([1.0 if r == n else 0.0 for r in rcv]) for n in names]
    cols.append(K * 1e6 / f**2)
    l = np.log10(f / 1000)
    for e in range(1, req["evolution"] + 1):
        cols.append(l**e)
    A = np.column_stack(cols)
    x, *_ = np.linalg.lstsq(A / s[:, None], y / s, rcond=None)
    cov = np.linalg.inv((A / s[:, None]).T @ (A / s[:, None]))
    r = (y - A @ x) / s
    out.append({"dm": x[len(names)], "dm_err": float(np.sqrt(cov[len(names), len(names)])), "chi2": float(r @ r)})
print(json.dumps(out))
`;

function relative(a: number, b: number): number {
  return Math.abs(a - b) / Math.abs(b);
}

describe.skipIf(!pythonAvailable)(
  'DM per visit against numpy.linalg.lstsq on the same weighted design',
  () => {
    for (const evolution of [0, 2]) {
      it(`residuals with per-receiver offsets, evolution ${evolution}: DM to 1e-9 relative`, () => {
        const rng = createRng(100 + evolution);
        const rows: SimToa[] = [];
        const visits: Array<{ freq: number[]; err: number[]; res: number[]; rcv: string[] }> = [];
        for (let v = 0; v < 40; v++) {
          const freqs = [600, 650, 700, 820, 1250, 1400, 1550, 1700, 2300, 3100].map(
            (f) => f + 10 * rng.uniform(),
          );
          const receivers = freqs.map((f) => (f < 1000 ? 'low' : f < 2000 ? 'mid' : 'high'));
          const errs = freqs.map(() => 0.05 + rng.uniform());
          const visit = simulateResidualVisit(
            k,
            {
              source: 'REF-1',
              startMjd: 60000.3 + 14 * v,
              ddm: (rng.uniform() < 0.5 ? -1 : 1) * (2e-3 + 1e-2 * rng.uniform()),
              freqsMhz: freqs,
              errUs: errs,
              receivers,
              receiverOffsetsUs: { low: 1.5, mid: 0, high: -2 },
            },
            rng,
          );
          rows.push(...visit);
          visits.push({
            freq: visit.map((r) => r.freq_mhz),
            err: visit.map((r) => r.err_us),
            res: visit.map((r) => r.residual_us),
            rcv: visit.map((r) => r.receiver!),
          });
        }
        const ours = fitDmVisits(makeTable(rows), {
          constant: k,
          grouping: { kind: 'gap', gapDays: 0.5 },
          evolution,
        });
        const ref = python<Array<{ dm: number; dm_err: number; chi2: number }>>(LSTSQ, {
          k: k.value,
          evolution,
          visits,
        });
        expect(ours).toHaveLength(40);
        ours.forEach((v, i) => {
          expect(relative(v.dm!, ref[i].dm)).toBeLessThan(1e-9);
          expect(relative(v.dm_err!, ref[i].dm_err)).toBeLessThan(1e-9);
          expect(Math.abs(v.chi2! - ref[i].chi2)).toBeLessThan(1e-8 * Math.max(1, ref[i].chi2));
        });
      });
    }

    it('arrival times folded modulo the period (offsets from exact decimal epochs in Python): DM to 1e-9 relative', () => {
      const rng = createRng(7);
      const period = 0.00405;
      const rows: Array<Record<string, string | number>> = [];
      const visits: Array<{ freq: number[]; err: number[]; mjd: string[]; period: number }> = [];
      for (let v = 0; v < 30; v++) {
        const dm = 0.2 + 0.5 * rng.uniform(); // sweep 1200–3400 MHz ≤ 1.8 ms < P/2 = 2.0 ms
        const t0 = parseMjd(
          `${60100 + 14 * v}.${String(1e11 + Math.floor(rng.uniform() * 1e10)).slice(1)}`,
        );
        const visit = { freq: [] as number[], err: [] as number[], mjd: [] as string[], period };
        [1200, 1400, 1600, 2000, 2600, 3400].forEach((f, i) => {
          const err = 0.2 + rng.uniform();
          const t = addSeconds(
            t0,
            (k.value * dm) / f ** 2 + (i * 13 + 5) * period + err * 1e-6 * rng.normal(),
          );
          const mjd = formatMjd(t, 18);
          rows.push({ source: 'REF-2', mjd, freq_mhz: f, err_us: err });
          visit.freq.push(f);
          visit.err.push(err);
          visit.mjd.push(mjd);
        });
        visits.push(visit);
      }
      const ours = fitDmVisits(makeTable(rows), {
        constant: k,
        grouping: { kind: 'gap', gapDays: 0.5 },
        periodS: period,
        evolution: 0,
      });
      const ref = python<Array<{ dm: number }>>(LSTSQ, { k: k.value, evolution: 0, visits });
      ours.forEach((v, i) => expect(relative(v.dm!, ref[i].dm)).toBeLessThan(1e-9));
    });
  },
);
