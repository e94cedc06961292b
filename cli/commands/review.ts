import { Command, Option } from 'commander';
import { numberOption, positive, withCommon } from '../common.js';
import { usageError } from '../errors.js';
import type { BaselineCheckOptions, PushOptions } from '../run/review.js';
import type { ServeOptions } from '../run/serve.js';
import type { WorkerOptions } from '../run/worker.js';

const serverOptions = (c: Command) =>
  c
    .option('--server <url>', 'review server (default: $SIGHTLINE_SERVER)')
    .option('--token <token>', 'API token (default: $SIGHTLINE_TOKEN)');

export function runsCommand(): Command {
  const push = serverOptions(
    withCommon(
      new Command('push')
        .argument(
          '[result...]',
          'result JSON files written by sightline (dm fit, dm series, scatter fit, scint analyse)',
        )
        .description(
          'send results to the review app as correction runs; prints each run id and URL',
        )
        .option('--submit', 'submit each run for review at once')
        .option('--title <text>', 'a title for the runs')
        .option(
          '--pending <dir>',
          'send the results a `batch --push` left pending in DIR/.pending, removing each marker once accepted',
        ),
      { constant: false },
    ),
  )
    .addHelpText(
      'after',
      '\nEvery file is checked before any is sent. Exit 2 for an invalid file or refused token,\n3 when the server cannot be reached.\n\nExample:\n  SIGHTLINE_SERVER=http://127.0.0.1:5180 SIGHTLINE_TOKEN=sl_… \\\n    sightline runs push fits/SBP-B.fit.json --submit',
    )
    .action(async (files: string[], o: PushOptions & { pending?: string }) => {
      if (o.pending) {
        if (files.length) throw usageError('give result files or --pending DIR, not both');
        return (await import('../run/batch.js')).runPushPending(o.pending, o);
      }
      if (!files.length) throw usageError('give result files to push (or --pending DIR)');
      return (await import('../run/review.js')).runPush(files, o);
    });
  return new Command('runs').description('correction runs on the review server').addCommand(push);
}

export function baselineCommand(): Command {
  const check = serverOptions(
    withCommon(
      new Command('check')
        .argument('<result...>', 'fresh result JSON files of reference pulsars')
        .description('compare fresh results with the approved baselines; exit 1 on any regression')
        .addOption(
          new Option('--tolerance-sigma <n>', 'allowed deviation in units of the baseline σ')
            .argParser(numberOption('--tolerance-sigma', positive))
            .default(3),
        )
        .option('--junit <file>', 'also write JUnit XML for the CI system (atomically)')
        .option('--require-baseline', 'fail when a result has no approved baseline'),
      { constant: false },
    ),
  )
    .addHelpText(
      'after',
      '\nExit codes: 0 all within tolerance · 1 a regression (or a missing baseline with\n--require-baseline) · 2 invalid file or token · 3 server unreachable.\n\nExample:\n  sightline baseline check out/SBP-B.fit.json --tolerance-sigma 2 --junit reports/baseline.xml',
    )
    .action(async (files: string[], o: BaselineCheckOptions) =>
      (await import('../run/review.js')).runBaselineCheck(files, o),
    );
  return new Command('baseline')
    .description('approved baselines of reference pulsars')
    .addCommand(check);
}

export function serveCommand(): Command {
  return new Command('serve')
    .description('start the review app (API and web) on the embedded database, or DATABASE_URL')
    .option(
      '--port <n>',
      'port (default: $PORT or 5180)',
      numberOption('--port', (v) =>
        Number.isInteger(v) && v >= 0 && v <= 65535 ? undefined : 'must be a port number',
      ),
    )
    .option('--host <address>', 'address to listen on (default: 127.0.0.1)')
    .option('--data-dir <dir>', 'embedded database, uploads and secrets (default: ./data)')
    .option(
      '--create-admin <email>',
      'create this admin account if missing; prints its password once',
    )
    .addHelpText(
      'after',
      '\nEnvironment: DATABASE_URL (PostgreSQL server), SMTP_URL (mail relay; without it mail is\nkept in the app), SIGHTLINE_PUBLIC_URL, SIGHTLINE_TRUSTED_ORIGINS, SIGHTLINE_AUTH_SECRET,\nSIGHTLINE_TRUST_PROXY, SIGHTLINE_UPLOAD_MB, SIGHTLINE_ANALYSIS_THREADS, LOG_LEVEL.',
    )
    .action(async (o: ServeOptions) => (await import('../run/serve.js')).runServe(o));
}

export function workerCommand(): Command {
  return new Command('worker')
    .description(
      "take server-side analyses from the review server's queue (needs DATABASE_URL: a PostgreSQL server)",
    )
    .addOption(
      new Option('--threads <n>', 'analyses at a time (default: CPUs − 1, at least 1)').argParser(
        numberOption('--threads', (v) =>
          Number.isInteger(v) && v >= 1 ? undefined : 'must be a positive integer',
        ),
      ),
    )
    .option('--name <name>', 'worker name recorded on each job (default: <host>:<pid>)')
    .option(
      '--data-dir <dir>',
      "the server's data directory, where uploads are read (default: $SIGHTLINE_DATA_DIR or ./data)",
    )
    .option('--quiet', 'log only warnings and errors')
    .addHelpText(
      'after',
      "\nWorkers on any number of machines share one PostgreSQL server's queue; each analysis runs\nonce. The data directory must be the server's (a shared file system on other machines).\nThe embedded database belongs to the server process, which runs its own worker.\nStops on SIGINT/SIGTERM after the analyses it has started. Environment: DATABASE_URL,\nSIGHTLINE_DATA_DIR, SIGHTLINE_PUBLIC_URL (links in results), LOG_LEVEL.",
    )
    .action(async (o: WorkerOptions) => (await import('../run/worker.js')).runWorker(o));
}
