import { Command } from 'commander';
import { numberOption } from '../common.js';
import { usageError } from '../errors.js';
import type { BatchOptions } from '../run/batch.js';

export function batchCommand(): Command {
  return new Command('batch')
    .argument(
      '<manifest>',
      'JSON or YAML: { out?, jobs: [{ name?, analysis, input, exclude?, options? }] }',
    )
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
    .option(
      '--push',
      'send each result the server does not have yet as a run (like runs push); unsent ones wait in OUT/.pending',
    )
    .option(
      '--shard <i/n>',
      "run only jobs whose index mod N is I−1 (after globs are expanded and sorted); a job that reads another job's result goes with it",
      parseShard,
    )
    .option('--server <url>', 'review server for --push (default: $SIGHTLINE_SERVER)')
    .option('--token <token>', 'API token for --push (default: $SIGHTLINE_TOKEN)')
    .option('--quiet', 'no progress or summary on stderr')
    .addHelpText(
      'after',
      [
        '',
        'Analyses: dm-fit, dm-series, toas-correct, scatter-fit, scint, dm-refine; options are the',
        'command\'s, in camelCase ("refFreq", "rfiFence", "range": "21.35:21.37:0.0005",',
        '"series": "{out}/{stem}.dm-series.json"). Inputs and file options are relative to the',
        'manifest; a glob gives one job per file, less the files or globs in "exclude". In file',
        "options {out} is the results folder and {stem} the input's name without its extension: a",
        "job that reads another job's result runs after it (and not at all if that one failed).",
        "Results go to OUT/<name>.<analysis>.json (toas-correct: the input's own layout and",
        'extension); a job whose inputs (SHA-256) and options are unchanged is skipped.',
        '',
        'Exit codes: 0 every job done or skipped (pushes may be pending) · 1 a job failed ·',
        '2 invalid manifest or option, or the server refused a push · 3 I/O failure.',
        '',
        'Examples:',
        '  sightline batch visits.yaml --jobs 4 --shard 1/2 --push',
        '  sightline demo generate --out demo && sightline batch demo/batch.yaml',
      ].join('\n'),
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
