import { Body, GeoVector, MakeTime } from 'astronomy-engine';
import { AU_PC } from '../physics/constants.js';

/** MJD of the J2000 epoch's day count origin used by astronomy-engine (2000-01-01 12:00). */
const MJD_J2000 = 51544.5;

export const SOLAR_MODEL = 'spherical wind n_e = n0 (1 AU / r)^2';

/**
 * Dispersion measure of a spherically symmetric solar wind n_e = n₀ (1 AU / r)², integrated
 * from an observer at r_E from the Sun along a line of sight at solar elongation ε:
 * DM_⊙ = n₀ · (1 AU) · (1 AU / r_E) · ρ / sin ρ, ρ = π − ε (the same spherical model as
 * You et al. 2007, from memory). Returns pc cm⁻³ for n₀ in cm⁻³.
 */
export function solarWindDm(n0Cm3: number, elongationRad: number, sunDistanceAu = 1): number {
  const rho = Math.PI - elongationRad;
  // ρ / sin ρ → 1 as ρ → 0 (pulsar in opposition)
  const geometry = rho < 1e-8 ? 1 : rho / Math.sin(rho);
  return (n0Cm3 * AU_PC * geometry) / sunDistanceAu;
}

/** Unit vector of right ascension and declination (degrees, equatorial J2000). */
export function unitVector(raDeg: number, decDeg: number): [number, number, number] {
  const ra = (raDeg * Math.PI) / 180;
  const dec = (decDeg * Math.PI) / 180;
  return [Math.cos(dec) * Math.cos(ra), Math.cos(dec) * Math.sin(ra), Math.sin(dec)];
}

export interface SunGeometry {
  elongationRad: number;
  sunDistanceAu: number;
}

/**
 * Solar elongation of a direction and the Earth–Sun distance at an MJD (UTC, treated as UT1;
 * the sub-second difference is irrelevant here). Sun position from astronomy-engine's
 * geometric geocentric vector in the J2000 equatorial frame (no aberration: the plasma's
 * place relative to the line of sight is what matters, and 20″ changes nothing here).
 */
export function sunGeometry(raDeg: number, decDeg: number, mjd: number): SunGeometry {
  const time = MakeTime(mjd - MJD_J2000);
  const v = GeoVector(Body.Sun, time, false);
  const r = Math.hypot(v.x, v.y, v.z);
  const [px, py, pz] = unitVector(raDeg, decDeg);
  const cos = (v.x * px + v.y * py + v.z * pz) / r;
  return { elongationRad: Math.acos(Math.max(-1, Math.min(1, cos))), sunDistanceAu: r };
}

/** Solar-wind DM for a pulsar position at an MJD. */
export function solarWindDmAt(n0Cm3: number, raDeg: number, decDeg: number, mjd: number) {
  const g = sunGeometry(raDeg, decDeg, mjd);
  return { ...g, dm: solarWindDm(n0Cm3, g.elongationRad, g.sunDistanceAu) };
}
