import { Command, CommanderError } from 'commander';
import { VERSION } from './common.js';
import { classify, EXIT } from './errors.js';
import { delayCommand } from './commands/delay.js';
import { solarCommand } from './commands/solar.js';
import { dmCommand } from './commands/dm.js';
import { toasCommand } from './commands/toas.js';
import { demoCommand } from './commands/demo.js';
import { scatterCommand } from './commands/scatter.js';
import { templateCommand } from './commands/template.js';
import { scintCommand } from './commands/scint.js';
import { baselineCommand, runsCommand, serveCommand, workerCommand } from './commands/review.js';
import { batchCommand } from './commands/batch.js';
import { dbCommand } from './commands/db.js';

export function buildProgram(): Command {
  const program = new Command('sightline')
    .description('Sightline: interstellar-medium corrections for pulsar arrival times')
    .version(VERSION, '-V, --version')
    .showHelpAfterError('(run with --help for usage)')
    .addHelpText(
      'after',
      '\nExit codes: 0 success · 1 a check failed · 2 usage error or invalid input · 3 I/O failure\nMachine output goes to stdout; progress and notes to stderr.',
    );
  for (const c of [
    delayCommand(),
    solarCommand(),
    dmCommand(),
    toasCommand(),
    templateCommand(),
    scatterCommand(),
    scintCommand(),
    batchCommand(),
    runsCommand(),
    baselineCommand(),
    serveCommand(),
    workerCommand(),
    dbCommand(),
    demoCommand(),
  ])
    program.addCommand(c);
  const exitOverrideAll = (c: Command) => {
    c.exitOverride();
    c.commands.forEach(exitOverrideAll);
  };
  exitOverrideAll(program);
  return program;
}

// A reader that stops early (`| head`) closes the pipe: that is not an error of ours.
process.stdout.on('error', (e: NodeJS.ErrnoException) => {
  if (e.code === 'EPIPE') process.exit(0);
  throw e;
});

export async function main(argv: string[]): Promise<number> {
  const program = buildProgram();
  try {
    await program.parseAsync(argv);
    return EXIT.ok;
  } catch (e) {
    if (e instanceof CommanderError) {
      // help and version are not errors; commander has already printed its message
      return e.exitCode === 0 ? EXIT.ok : EXIT.usage;
    }
    const { code, message } = classify(e);
    process.stderr.write(`sightline: ${message}\n`);
    return code;
  }
}

main(process.argv).then(
  (code) => {
    process.exitCode = code;
  },
  (e) => {
    process.stderr.write(`sightline: internal error: ${String(e)}\n`);
    process.exitCode = 1;
  },
);
