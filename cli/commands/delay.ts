import { Command } from 'commander';
import { numberOption, positive, withCommon } from '../common.js';
import { usageError } from '../errors.js';
import type { DelayOptions } from '../run/delay.js';

function parseFreqList(text: string): number[] {
  const parse = numberOption('--freq', positive);
  const list = text.split(',').map((t) => parse(t));
  if (list.length === 0) throw usageError('--freq: give at least one frequency in MHz');
  return list;
}

export function delayCommand(): Command {
  return withCommon(
    new Command('delay')
      .description(
        'cold-plasma dispersion delay between frequencies or to infinite frequency, and channel smearing',
      )
      .requiredOption('--dm <dm>', 'dispersion measure, pc cm⁻³', numberOption('--dm'))
      .requiredOption('--freq <mhz[,mhz…]>', 'observing frequencies, MHz', parseFreqList)
      .option('--ref <mhz|inf>', 'reference frequency in MHz, or inf (default)')
      .option(
        '--channel-width <mhz>',
        'channel width for intra-channel smearing, MHz',
        numberOption('--channel-width', positive),
      )
      .addHelpText(
        'after',
        '\nExample:\n  sightline delay --dm 30 --freq 400 --ref 800\n  sightline delay --dm 50 --freq 800,1400 --channel-width 1 --json',
      ),
  ).action(async (o: DelayOptions) => (await import('../run/delay.js')).runDelay(o));
}
