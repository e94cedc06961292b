import { Command } from 'commander';
import { numberOption } from '../common.js';
import type { DemoOptions } from '../run/demo.js';
import type { SeedOptions } from '../run/demo-seed.js';

export function demoCommand(): Command {
  const generate = new Command('generate')
    .description(
      "write the demo observatory's six invented pulsars from the seeded simulator, with a batch manifest over all of it (DIR/batch.yaml)",
    )
    .requiredOption('--out <dir>', 'folder to write')
    .option(
      '--seed <n>',
      'simulator seed',
      numberOption('--seed', (v) =>
        Number.isInteger(v) && v >= 0 ? undefined : 'must be a whole number ≥ 0',
      ),
      1,
    )
    .option('--force', 'replace the folder if it is not empty')
    .option('--quiet', 'print nothing')
    .addHelpText(
      'after',
      '\nExamples:\n  sightline demo generate --out demo-data --seed 1\n  sightline batch demo-data/batch.yaml --jobs 4   # every analysis, results in demo-data/batch-results',
    )
    .action(async (o: DemoOptions) => (await import('../run/demo.js')).runDemo(o));
  const seed = new Command('seed')
    .description(
      "prepare the review server's database for the demo: the team's accounts, the pulsars, robot tokens",
    )
    .requiredOption('--catalogue <file>', 'pulsars.json written by demo generate')
    .option('--data-dir <dir>', 'the server data folder (default: ./data)', 'data')
    .option('--quiet', 'print nothing')
    .addHelpText(
      'after',
      '\nRun it while the server is stopped. Sign-ins are written to DIR/demo-sign-ins.json.',
    )
    .action(async (o: SeedOptions) => (await import('../run/demo-seed.js')).runDemoSeed(o));
  return new Command('demo')
    .description('the fictional demo data set')
    .addCommand(generate)
    .addCommand(seed);
}
