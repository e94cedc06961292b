import { Command } from 'commander';
import { numberOption, positive, withCommon } from '../common.js';
import type { ScintCliOptions } from '../run/scint.js';

export function scintCommand(): Command {
  const analyse = withCommon(
    new Command('analyse')
      .argument(
        '<dynspec>',
        'dynamic spectrum: .npy [nchan, nsub] with a sidecar JSON, or CSV freq_mhz,time_s,intensity',
      )
      .description(
        'interference flags, 2-D autocorrelation, decorrelation bandwidth and time, τ from scintles, secondary spectrum and arc',
      )
      .option(
        '--meta <file>',
        'sidecar JSON (default DYNSPEC.json for .npy; source and mjd for CSV)',
      )
      .option(
        '--rfi-fence <k>',
        'Tukey fence multiple for whole-channel flags (Q3 + k·IQR)',
        numberOption('--rfi-fence', positive),
        1.5,
      )
      .option(
        '--pixel-sigma <n>',
        'single pixels and sub-integrations beyond N robust σ are flagged',
        numberOption('--pixel-sigma', positive),
        5,
      )
      .option(
        '--c1 <c>',
        'C₁ in τ = C₁/(2π Δν_d): 1.16 uniform Kolmogorov medium, 0.957 thin screen, 1 simple',
        numberOption('--c1', positive),
        1.16,
      )
      .option(
        '--mask <file>',
        'channels flagged from the start: { "channels_mhz": [..] } or an earlier scint result (its persistent channels)',
      )
      .option(
        '--mask-from-server',
        "start from the interference channels the review server remembers for the spectrum's receiver (GET /api/rfi/RECEIVER)",
      )
      .option('--server <url>', 'review server for --mask-from-server (default: $SIGHTLINE_SERVER)')
      .option('--token <token>', 'API token for --mask-from-server (default: $SIGHTLINE_TOKEN)')
      .option(
        '--tails <scatter.json>',
        'a scattering fit of the same visit: τ from tails beside τ from scintles',
      )
      .option('--dynspec <file.png>', 'draw the dynamic spectrum with its flags')
      .option('--secondary <file.png>', 'draw the secondary spectrum with the fitted arc')
      .addHelpText(
        'after',
        '\nExamples:\n  sightline scint analyse visit.dynspec.npy --dynspec dyn.png --secondary sec.png\n  sightline scint analyse visit.csv --meta visit.json --c1 0.957 --json --out scint.json\n  sightline scint analyse visit.npy --tails visit.scatter.json --mask low-band.mask.json\n  SIGHTLINE_SERVER=http://127.0.0.1:5180 SIGHTLINE_TOKEN=sl_… sightline scint analyse visit.npy --mask-from-server\n\n--mask-from-server: exit 2 when the spectrum names no receiver or the server refuses the token,\n3 when the server cannot be reached.',
      ),
    { constant: false },
  ).action(async (file: string, o: ScintCliOptions) =>
    (await import('../run/scint.js')).runScintAnalyse(file, o),
  );
  return new Command('scint').description('scintillation from dynamic spectra').addCommand(analyse);
}
