import { describe, expect, it } from 'vitest';
import { solarWindDm, solarWindDmAt, sunGeometry } from '../../shared/solar/solar-wind.js';
import { AU_PC } from '../../shared/physics/constants.js';
import { python, pythonAvailable } from '../helpers/python.js';

describe('solar-wind DM, closed form (science.md check values)', () => {
  it('n0 = 4, r_E = 1 AU: ε = 90° → 3.04617e-5, ε = 5° → 6.79601e-4 pc cm⁻³', () => {
    expect(solarWindDm(4, Math.PI / 2)).toBeCloseTo(3.04617e-5, 10);
    expect(solarWindDm(4, (5 * Math.PI) / 180)).toBeCloseTo(6.79601e-4, 9);
  });

  it('equals a direct numerical line-of-sight integral of n0 (1 AU / r)²', () => {
    // trapezoid in the substitution l = b·tan θ, which makes the integrand constant: the
    // integral is n0·AU²/b · (π − ε); integrate numerically in l instead to check the algebra
    const eps = (40 * Math.PI) / 180;
    const rE = 0.985;
    const b = rE * Math.sin(eps);
    const l0 = -rE * Math.cos(eps); // observer's position along the line (Sun's foot at l = 0)
    let sum = 0;
    const n = 400000;
    const lMax = 1e5;
    // map [0,1) → [l0, ∞) with l = l0 + u/(1−u) · 5
    for (let i = 0; i < n; i++) {
      const u = (i + 0.5) / n;
      const l = l0 + (u / (1 - u)) * 5;
      const dl = 5 / (1 - u) ** 2 / n;
      if (l > lMax) break;
      sum += dl / (b * b + l * l);
    }
    expect(sum * 10 * AU_PC).toBeCloseTo(solarWindDm(10, eps, rE), 8);
  });
});

describe('Sun geometry: astronomy-engine against astropy (Debian python3-astropy)', () => {
  const cases = [
    { ra: 61.2, dec: -12.4, mjd: 60440.5 },
    { ra: 140.8, dec: 33.0, mjd: 60600.25 },
    { ra: 272.9, dec: -23.3, mjd: 60660 },
    { ra: 0, dec: 0, mjd: 60390.1 },
    { ra: 201.4, dec: 60.7, mjd: 61000.9 },
  ];
  // Like for like: the geometric Earth→Sun vector in ICRS axes from astropy's built-in
  // ephemeris. Seen here: elongations agree to ≤ 3.4e-4° and distances to ≤ 7.7e-6 AU, the
  // accuracy of astronomy-engine's truncated planetary series (documented at the arcminute
  // level); tolerances are twice and three times that. DM_sun moves by < 1e-5 relative.
  it.skipIf(!pythonAvailable)(
    'elongation within 0.001° and Earth–Sun distance within 2e-5 AU',
    () => {
      const ref = python<Array<{ elong: number; dist: number }>>(
        `
import json, sys
import numpy as np
from astropy.utils import iers
iers.conf.auto_download = False
from astropy.time import Time
from astropy.coordinates import get_body_barycentric
out = []
for c in json.load(sys.stdin):
    t = Time(c["mjd"], format="mjd", scale="utc")
    v = (get_body_barycentric("sun", t) - get_body_barycentric("earth", t)).xyz.to("au").value
    ra, dec = np.radians(c["ra"]), np.radians(c["dec"])
    p = np.array([np.cos(dec)*np.cos(ra), np.cos(dec)*np.sin(ra), np.sin(dec)])
    r = float(np.linalg.norm(v))
    out.append({"elong": float(np.degrees(np.arccos(np.dot(v, p) / r))), "dist": r})
print(json.dumps(out))`,
        cases,
      );
      cases.forEach((c, i) => {
        const g = sunGeometry(c.ra, c.dec, c.mjd);
        expect(Math.abs((g.elongationRad * 180) / Math.PI - ref[i].elong)).toBeLessThan(0.001);
        expect(Math.abs(g.sunDistanceAu - ref[i].dist)).toBeLessThan(2e-5);
        // and the DM from astropy's geometry through the same closed form agrees to 1e-4 relative
        const dmRef = solarWindDm(8, (ref[i].elong * Math.PI) / 180, ref[i].dist);
        expect(Math.abs(solarWindDmAt(8, c.ra, c.dec, c.mjd).dm / dmRef - 1)).toBeLessThan(1e-4);
      });
    },
  );
});
