import { Command } from 'commander';
import { numberOption } from '../common.js';
import { usageError } from '../errors.js';
import type { BatchOptions } from '../run/batch.js';

export function batchCommand(): Command {
  return new Command('batch')
    .argument('<manifest>', 'JSON or YAML: { out?, jobs: [{ name?, analysis, input, options? }] }')
    .description(
      'run many analyses on a worker pool; resumable; one JSON line per finished job on stdout',
    )
    .option(
      '--jobs <n>',
      'worker threads (default: the number of CPUs)',
      numberOption('--jobs', (v) =>
        Number.isInteger(v) && v >= 1 ? undefined : 'must be a positive integer',
      ),
    )
    .option('--out <dir>', "results folder (default: the manifest's out, else results/ beside it)")
    .option('--force', 'run every job again, even when its result is up to date')
    .option('--push', 'send each result to the review server as a run (like runs push)')
    .option(
      '--shard <i/n>',
      'run only jobs whose index mod N is I−1 (after globs are expanded and sorted)',
      parseShard,
    )
    .option('--server <url>', 'review server for --push (default: $SIGHTLINE_SERVER)')
    .option('--token <token>', 'API token for --push (default: $SIGHTLINE_TOKEN)')
    .option('--quiet', 'no progress or summary on stderr')
    .addHelpText(
      'after',
      '\nAnalyses: dm-fit, dm-series, scatter-fit, scint, dm-refine; options are the command\'s, in\ncamelCase ("refFreq", "rfiFence", "range": "21.35:21.37:0.0005"). Inputs and file options are\nrelative to the manifest; a glob gives one job per file. Results go to OUT/<name>.<analysis>.json;\na job whose inputs (SHA-256) and options are unchanged is skipped.\n\nExit codes: 0 every job done or skipped (pushes may be pending) · 1 a job failed ·\n2 invalid manifest or option · 3 I/O failure.\n\nExample:\n  sightline batch visits.yaml --jobs 4 --shard 1/2 --push',
    )
    .action(async (manifest: string, o: BatchOptions) =>
      (await import('../run/batch.js')).runBatch(manifest, o),
    );
}

/** I/N with 1 ≤ I ≤ N, checked at parse time. */
function parseShard(text: string): { index: number; count: number } {
  const m = /^\s*(\d+)\s*\/\s*(\d+)\s*$/.exec(text);
  const index = m ? Number(m[1]) : NaN;
  const count = m ? Number(m[2]) : NaN;
  if (!m || !(count >= 1) || !(index >= 1) || index > count)
    throw usageError(`--shard: "${text}" is not I/N with 1 ≤ I ≤ N (for example 1/4)`);
  return { index, count };
}
