import { dispersionConstant } from '../../shared/physics/constants.js';
import { delayToInfinityS } from '../../shared/physics/dispersion.js';
import { solarWindDmAt, SOLAR_MODEL } from '../../shared/solar/solar-wind.js';
import type { SolarResult } from '../../shared/schemas/solar.js';
import { formatOf, SOFTWARE, type CommonOptions } from '../common.js';
import { csv, fmt, json, table } from '../render.js';
import { writeOutput } from '../io/output.js';

export interface SolarOptions extends CommonOptions {
  ra: number;
  dec: number;
  mjd: number;
  n0: number;
}

export function computeSolar(o: SolarOptions): SolarResult {
  const r = solarWindDmAt(o.n0, o.ra, o.dec, o.mjd);
  // typed by the shared schema; tests validate the output with it (zod stays off this cold path)
  const result: SolarResult = {
    schema: 'sightline/solar@1',
    software: SOFTWARE,
    input: [],
    mjd: o.mjd,
    ra_deg: o.ra,
    dec_deg: o.dec,
    n0_cm3: o.n0,
    elongation_deg: (r.elongationRad * 180) / Math.PI,
    sun_distance_au: r.sunDistanceAu,
    dm: r.dm,
    model: SOLAR_MODEL,
    warnings: [],
  };
  const elongationDeg = result.elongation_deg;
  if (elongationDeg < 0.27)
    result.warnings!.push(
      'the line of sight passes through the solar disc: the value is meaningless',
    );
  else if (elongationDeg < 5)
    result.warnings!.push('within 5° of the Sun the spherical solar-wind model is crude');
  return result;
}

export async function runSolar(o: SolarOptions): Promise<void> {
  const r = computeSolar(o);
  const f = formatOf(o);
  const head = ['mjd', 'ra_deg', 'dec_deg', 'n0_cm3', 'elongation_deg', 'sun_distance_au', 'dm'];
  const row = [r.mjd, r.ra_deg, r.dec_deg, r.n0_cm3, r.elongation_deg, r.sun_distance_au, r.dm];
  const text =
    f === 'json'
      ? json(r)
      : f === 'csv'
        ? csv(head, [row])
        : `${r.model}\n` +
          table(
            [
              'MJD',
              'RA (°)',
              'Dec (°)',
              'n0 (cm⁻³)',
              'elongation (°)',
              'r_E (AU)',
              'DM_sun (pc cm⁻³)',
            ],
            [row],
            [0, 1, 2, 3, 4, 5, 6],
          ) +
          `delay at 1400 MHz: ${fmt(delayToInfinityS(dispersionConstant('conventional'), r.dm, 1400) * 1e6)} µs (conventional K)\n`;
  await writeOutput(o.out, text);
}
