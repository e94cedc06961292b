import { Command, Option } from 'commander';
import { nonNegative, numberOption, positive, withCommon } from '../common.js';
import type { FitCliOptions, SeriesCliOptions } from '../run/dm.js';
import type { RefineCliOptions } from '../run/cubes.js';
import { usageError } from '../errors.js';

function addFitOptions(cmd: Command): Command {
  return cmd
    .option(
      '--gap <days>',
      'a new visit starts after a gap longer than DAYS (default 0.5)',
      numberOption('--gap', positive),
    )
    .option(
      '--window <days>',
      'fixed DM windows of DAYS instead of gap-separated visits',
      numberOption('--window', positive),
    )
    .option(
      '--window-start <mjd>',
      'MJD where the first window starts (default 0, so windows repeat across files)',
      numberOption('--window-start', nonNegative),
    )
    .option(
      '--period-s <seconds>',
      'pulse period: arrival-time offsets are taken modulo it (a period_s column takes precedence)',
      numberOption('--period-s', positive),
    )
    .option(
      '--clip <sigma>',
      'iteratively drop the worst arrival time beyond SIGMA (robustly scaled)',
      numberOption('--clip', positive),
    )
    .option(
      '--evolution <n>',
      'add a polynomial of degree N in log10(ν/1 GHz) for profile evolution',
      numberOption('--evolution', (v) =>
        Number.isInteger(v) && v >= 0 && v <= 5 ? undefined : 'must be an integer 0–5',
      ),
      0,
    );
}

export function dmCommand(): Command {
  const dm = new Command('dm').description('DM per visit, DM series');
  const fit = addFitOptions(
    withCommon(
      new Command('fit')
        .argument('<file>', 'arrival-time table (CSV, JSON array or NDJSON)')
        .description(
          'fit DM per visit by weighted least squares (residuals give a DM offset, arrival times an absolute DM)',
        )
        .option('--strict', 'exit 1 when any visit is unconstrained')
        .addOption(
          new Option('--scatter <mode>', 'chromatic fit: add a scattering term S·(ν/ν_ref)^−α')
            .choices(['none', 'fixed', 'free'])
            .default('none'),
        )
        .option(
          '--alpha <a>',
          'α of the fixed-α scattering model (default 4.4, Kolmogorov)',
          numberOption('--alpha', positive),
        )
        .option(
          '--ref-freq <mhz>',
          'reference frequency of the scattering term, MHz',
          numberOption('--ref-freq', positive),
          1000,
        )
        .addHelpText(
          'after',
          '\nExamples:\n  sightline dm fit toas.csv\n  sightline dm fit toas.csv --window 14 --clip 4 --json --out fit.json\n  sightline dm fit arrivals.csv --period-s 0.00405 --evolution 1\n  sightline dm fit toas.csv --scatter free --json   # DM + scattering, models compared by BIC',
        ),
    ),
  ).action(async (file: string, o: FitCliOptions) =>
    (await import('../run/dm.js')).runFitCommand(file, o),
  );
  const series = addFitOptions(
    withCommon(
      new Command('series')
        .argument('<file>', 'arrival-time table, or a dm-fit JSON result')
        .description(
          'DM series over visits or windows, optionally smoothed and with the solar wind removed',
        )
        .addOption(
          new Option('--smooth <method>', 'smoothing of the series')
            .choices(['none', 'gp'])
            .default('none'),
        )
        .option(
          '--solar <n0>',
          'subtract a spherical solar wind with N0 electrons cm⁻³ at 1 AU',
          numberOption('--solar', nonNegative),
        )
        .option('--ra <deg>', 'pulsar right ascension for --solar, degrees', numberOption('--ra'))
        .option('--dec <deg>', 'pulsar declination for --solar, degrees', numberOption('--dec'))
        .option('--positions <file>', 'JSON list of { source, ra_deg, dec_deg } for --solar')
        .option(
          '--ref-dm <dm>',
          'reference DM the corrections are taken against (default: weighted mean, or 0 for offsets)',
          numberOption('--ref-dm'),
        )
        .addHelpText(
          'after',
          '\nExamples:\n  sightline dm series toas.csv --smooth gp --json --out series.json\n  sightline dm series fit.json --solar 8 --ra 61.2 --dec -12.4',
        ),
    ),
  ).action(async (file: string, o: SeriesCliOptions) =>
    (await import('../run/dm.js')).runSeriesCommand(file, o),
  );
  const refine = withCommon(
    new Command('refine')
      .argument('<cube>', 'profile cube: JSON, or .npy [nchan, nbin] with a sidecar JSON')
      .description(
        'DM by matched-filter S/N over trial DMs (Fourier shifts of every channel), and from the channel arrival times',
      )
      .requiredOption(
        '--range <lo:hi:step>',
        'trial DMs from LO to HI in steps of STEP (pc cm⁻³)',
        (text: string) => parseRangeLazy(text),
      )
      .option('--meta <file>', 'sidecar JSON for a .npy cube (default CUBE.json)')
      .option(
        '--template <file>',
        'template profile (default: one built from this cube, which favours its own DM)',
      )
      .option(
        '--min-snr <snr>',
        'channels below this S/N give no arrival time (default 8)',
        numberOption('--min-snr', positive),
      )
      .option(
        '--profile-out <file.json>',
        'write the dedispersed, band-averaged profile at the best DM (a profile file)',
      )
      .addHelpText(
        'after',
        '\nExamples:\n  sightline dm refine visit.npy --range 21.30:21.42:0.0005 --template sbp-b.template.json\n  sightline dm refine visit.npy --range 21.3:21.4:0.001 --json --profile-out summed.json',
      ),
  ).action(async (file: string, o: RefineCliOptions) =>
    (await import('../run/cubes.js')).runDmRefine(file, o),
  );
  return dm.addCommand(fit).addCommand(series).addCommand(refine);
}

/** LO:HI:STEP checked at parse time (the numbers only; the run checks the trial count). */
function parseRangeLazy(text: string): { lo: number; hi: number; step: number } {
  const parts = text.split(':');
  if (parts.length !== 3)
    throw usageError(`--range: "${text}" is not LO:HI:STEP (for example 21.30:21.42:0.0005)`);
  const names = ['LO', 'HI', 'STEP'];
  const [lo, hi, step] = parts.map((p, i) => {
    const v = p.trim() === '' ? NaN : Number(p);
    if (!Number.isFinite(v)) throw usageError(`--range: ${names[i]} "${p}" is not a finite number`);
    return v;
  });
  if (!(step > 0)) throw usageError(`--range: STEP must be positive, got ${parts[2]}`);
  if (!(hi >= lo)) throw usageError(`--range: HI (${hi}) is below LO (${lo})`);
  return { lo, hi, step };
}
