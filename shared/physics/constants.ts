/**
 * Dispersion constants, s MHz² pc⁻¹ cm³.
 *
 * physical: e² / (2π m_e c) from CODATA 2018 (checked against astropy.constants in
 *   tests/reference); Lorimer & Kramer 2005, Handbook of Pulsar Astronomy, eq. 4.7.
 * conventional: 1 / 2.41e-4, the value pulsar timing has long used so that published DMs
 *   agree (common practice).
 */
// CODATA 2018 (SI): elementary charge (exact), electron mass, vacuum permittivity; IAU 2015 parsec.
const E_CHARGE_C = 1.602176634e-19;
const ELECTRON_MASS_KG = 9.1093837015e-31;
const SPEED_OF_LIGHT_M_S = 299792458;
const EPSILON0_F_M = 8.8541878128e-12;
const AU_M = 149597870700; // IAU 2012 Resolution B2
const PARSEC_M = (648000 / Math.PI) * AU_M; // IAU 2015 Resolution B2

/** e² / (8π² ε₀ m_e c) in s Hz² m² (SI), converted to s MHz² pc⁻¹ cm³. */
const K_PHYSICAL =
  ((E_CHARGE_C ** 2 / (8 * Math.PI ** 2 * EPSILON0_F_M * ELECTRON_MASS_KG * SPEED_OF_LIGHT_M_S)) *
    PARSEC_M *
    1e6) /
  1e12;

export const DISPERSION_CONSTANTS = {
  conventional: 1 / 2.41e-4,
  physical: K_PHYSICAL,
} as const;

export type ConstantName = keyof typeof DISPERSION_CONSTANTS;

export const CONSTANT_NAMES = Object.keys(DISPERSION_CONSTANTS) as ConstantName[];

export interface DispersionConstant {
  name: ConstantName;
  value: number;
}

export function dispersionConstant(name: ConstantName = 'conventional'): DispersionConstant {
  const value = DISPERSION_CONSTANTS[name];
  if (value === undefined) throw new RangeError(`unknown dispersion constant "${String(name)}"`);
  return { name, value };
}

/** One astronomical unit in parsecs (IAU 2012 au; 1 pc = 648000/π au). */
export const AU_PC = Math.PI / 648000;

export const SECONDS_PER_DAY = 86400;
