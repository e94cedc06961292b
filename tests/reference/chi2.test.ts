import { describe, expect, it } from 'vitest';
import { chi2Cdf, chi2Sf } from '../../shared/stats/gamma.js';
import { python, pythonAvailable } from '../helpers/python.js';

describe.skipIf(!pythonAvailable)('χ² distribution against scipy.stats.chi2', () => {
  it('cdf and survival function agree to 1e-10 relative over a wide range', () => {
    const cases: Array<[number, number]> = [];
    for (const k of [1, 2, 3, 5, 10, 30, 100, 1000])
      for (const f of [0.01, 0.3, 0.8, 1, 1.5, 3, 8]) cases.push([f * k, k]);
    const ref = python<{ cdf: number[]; sf: number[] }>(
      `
import json, sys
from scipy.stats import chi2
cases = json.load(sys.stdin)
print(json.dumps({"cdf": [chi2.cdf(x, k) for x, k in cases], "sf": [chi2.sf(x, k) for x, k in cases]}))`,
      cases,
    );
    cases.forEach(([x, k], i) => {
      const sf = chi2Sf(x, k);
      const cdf = chi2Cdf(x, k);
      if (ref.sf[i] > 1e-300) expect(Math.abs(sf / ref.sf[i] - 1)).toBeLessThan(1e-10);
      if (ref.cdf[i] > 1e-300) expect(Math.abs(cdf / ref.cdf[i] - 1)).toBeLessThan(1e-10);
    });
  });
});
