import { Command, Option } from 'commander';
import { withCommon } from '../common.js';
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

export function toasCommand(): Command {
  return new Command('toas').description('arrival-time tables').addCommand(correctionCommand());
}
