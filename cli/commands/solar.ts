import { Command } from 'commander';
import { nonNegative, numberOption, withCommon } from '../common.js';
import type { SolarOptions } from '../run/solar.js';

export function solarCommand(): Command {
  return withCommon(
    new Command('solar')
      .description(
        'solar-wind DM for a pulsar position and epoch (spherical wind; Sun from astronomy-engine)',
      )
      .requiredOption(
        '--ra <deg>',
        'right ascension, degrees (J2000)',
        numberOption('--ra', (v) => (v >= 0 && v <= 360 ? undefined : 'must be within 0–360')),
      )
      .requiredOption(
        '--dec <deg>',
        'declination, degrees (J2000)',
        numberOption('--dec', (v) => (v >= -90 && v <= 90 ? undefined : 'must be within −90–90')),
      )
      .requiredOption(
        '--mjd <mjd>',
        'epoch, MJD (UTC)',
        numberOption('--mjd', (v) => (v > 0 ? undefined : 'must be positive')),
      )
      .option('--n0 <cm3>', 'electron density at 1 AU, cm⁻³', numberOption('--n0', nonNegative), 4)
      .addHelpText(
        'after',
        '\nExample:\n  sightline solar --ra 61.2 --dec -12.4 --mjd 60440 --n0 8',
      ),
    { constant: false },
  ).action(async (o: SolarOptions) => (await import('../run/solar.js')).runSolar(o));
}
