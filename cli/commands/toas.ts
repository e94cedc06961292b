import { Command, Option } from 'commander';
import { numberOption, positive, withCommon } from '../common.js';
import type { ExtractCliOptions } from '../run/cubes.js';
import type { CorrectOptions } from '../run/toas.js';

export function correctionCommand(): Command {
  return withCommon(
    new Command('correct')
      .argument('<file>', 'arrival-time table (CSV, JSON array or NDJSON)')
      .description(
        "apply a DM series to arrival times; writes the input's own layout plus dm_correction_us",
      )
      .requiredOption('--series <file>', 'dm-series JSON from sightline dm series')
      .addOption(
        new Option('--use <curve>', 'the smooth curve, or linear interpolation between visits')
          .choices(['auto', 'smooth', 'points'])
          .default('auto'),
      )
      .option(
        '--extrapolate',
        'hold the end values for arrival times outside the series (otherwise exit 1)',
      )
      .addHelpText(
        'after',
        '\nThe output keeps the input layout (CSV, JSON array or NDJSON); --format is not used.\n\nExample:\n  sightline toas correct toas.csv --series series.json --out toas.corrected.csv',
      ),
    { constant: false },
  ).action(async (file: string, o: CorrectOptions) =>
    (await import('../run/toas.js')).runCorrect(file, o),
  );
}

export function extractCommand(): Command {
  return withCommon(
    new Command('extract')
      .argument('<cube...>', 'profile cubes: JSON, or .npy [nchan, nbin] with a sidecar JSON')
      .description(
        'arrival times per channel by Fourier template matching, or with --joint one arrival time and DM per cube',
      )
      .requiredOption(
        '--template <file>',
        'template profile: one band for every channel, or one band per cube channel',
      )
      .option('--meta <file>', 'sidecar JSON of a single .npy cube (default CUBE.json)')
      .option(
        '--joint',
        'fit one phase and one DM to all channels at once (wideband); writes dm and dm_err columns',
      )
      .option(
        '--min-snr <snr>',
        'skip channels whose matched-filter S/N is below this (default 8)',
        numberOption('--min-snr', positive),
      )
      .addHelpText(
        'after',
        '\nOutput: the arrival-time table (CSV by default, --json for a JSON array), ready for\n`sightline dm fit` (channel times) or `sightline dm series` (--joint).\n\nExamples:\n  sightline toas extract visit.npy --template sbp-b.template.json --out toas.csv\n  sightline toas extract cubes/*.npy --template sbp-b.template.json --joint --out wideband.csv',
      ),
  ).action(async (cubes: string[], o: ExtractCliOptions) =>
    (await import('../run/cubes.js')).runToasExtract(cubes, o),
  );
}

export function toasCommand(): Command {
  return new Command('toas')
    .description('arrival-time tables')
    .addCommand(extractCommand())
    .addCommand(correctionCommand());
}
