import { Command, Option } from 'commander';
import { numberOption, positive, withCommon } from '../common.js';
import { usageError } from '../errors.js';
import type { ScatterCliOptions } from '../run/scatter.js';

function parseAlpha(text: string): number | 'free' {
  if (text === 'free') return 'free';
  const v = Number(text);
  if (text.trim() === '' || !Number.isFinite(v) || v <= 0)
    throw usageError(`--alpha: "${text}" is neither "free" nor a positive number`);
  return v;
}

export function scatterCommand(): Command {
  const fit = withCommon(
    new Command('fit')
      .argument('<file>', 'profiles: JSON, or .npy [nchan, nbin] with a sidecar JSON')
      .description('scattering time τ per band from pulse profiles, and the τ(ν) power law')
      .addOption(
        new Option('--model <model>', 'intrinsic pulse model')
          .choices(['gauss', 'gauss2', 'gauss3', 'template'])
          .default('gauss'),
      )
      .option(
        '--template <file>',
        'template profile for --model template (its highest-frequency band is used)',
      )
      .option('--meta <file>', 'sidecar JSON for a .npy file (default FILE.json)')
      .option(
        '--alpha <free|A>',
        'frequency index of τ: fitted, or held at A (e.g. 4.4)',
        parseAlpha,
        'free',
      )
      .option(
        '--ref-freq <mhz>',
        'reference frequency of the power law',
        numberOption('--ref-freq', positive),
        1000,
      )
      .option(
        '--dm <dm>',
        "DM for the empirical τ–DM comparison (default: the file's own)",
        numberOption('--dm', positive),
      )
      .option('--plot <file.png>', 'draw data, model and residuals per band into a PNG')
      .addHelpText(
        'after',
        '\nExamples:\n  sightline scatter fit visit.npy --plot visit.png\n  sightline scatter fit visit.json --model gauss2 --alpha 4.4 --json\n  sightline scatter fit visit.npy --model template --template quiet.json',
      ),
    { constant: false },
  ).action(async (file: string, o: ScatterCliOptions) =>
    (await import('../run/scatter.js')).runScatterFit(file, o),
  );
  return new Command('scatter').description('scattering from pulse profiles').addCommand(fit);
}
