import { Command, Option } from 'commander';
import { withCommon } from '../common.js';
import type { TemplateCliOptions } from '../run/cubes.js';

export function templateCommand(): Command {
  const build = withCommon(
    new Command('build')
      .argument('<cube...>', 'profile cubes of one pulsar (many visits make a smoother template)')
      .description(
        'a smooth template: band-averaged profiles of every visit aligned, noise-weighted, averaged and smoothed',
      )
      .addOption(
        new Option('--smooth <method>', 'smoothing of the average')
          .choices(['fourier', 'wavelet', 'none'])
          .default('fourier'),
      )
      .addHelpText(
        'after',
        '\nThe template is a profile file (JSON) with its peak at phase 0.5, which is its\nfiducial phase: arrival times measured with it mark the pulse peak. --out writes it\natomically; without --out it goes to stdout.\n\nExample:\n  sightline template build demo/cubes/SBP-B/*.npy --out sbp-b.template.json',
      ),
    { constant: false },
  ).action(async (cubes: string[], o: TemplateCliOptions) =>
    (await import('../run/cubes.js')).runTemplateBuild(cubes, o),
  );
  return new Command('template').description('pulse templates').addCommand(build);
}
