import { Command } from 'commander';
import type { DbOptions } from '../run/db.js';

const dataDir = (c: Command) =>
  c
    .option(
      '--data-dir <dir>',
      "the server's data folder (default: $SIGHTLINE_DATA_DIR or ./data)",
      process.env.SIGHTLINE_DATA_DIR || 'data',
    )
    .option('--json', 'print a JSON summary on stdout')
    .option('--quiet', 'print nothing on stderr');

export function dbCommand(): Command {
  const backup = dataDir(
    new Command('backup')
      .argument('<file>', 'the backup to write (one .tar.gz file)')
      .description(
        'back up the embedded database, uploads and session secret into one checked file (server stopped)',
      )
      .option('--force', 'replace FILE if it exists'),
  )
    .addHelpText(
      'after',
      '\nThe file is written under a temporary name and renamed when complete. It holds password\nhashes and the session secret: keep it like the data folder. For PostgreSQL use pg_dump.\n\nExample:\n  sightline db backup backups/sightline-$(date +%F).tar.gz --data-dir data',
    )
    .action(async (file: string, o: DbOptions) =>
      (await import('../run/db.js')).runDbBackup(file, o),
    );
  const restore = dataDir(
    new Command('restore')
      .argument('<file>', 'a backup written by `sightline db backup`')
      .description(
        'restore a backup into a data folder, checking every file and every table against it',
      )
      .option('--force', 'replace a database already there (the old one is kept beside it)'),
  )
    .addHelpText(
      'after',
      '\nNothing in the data folder changes unless the whole backup checks out. Exit 2 for a\ndamaged or foreign file, 3 when the folder is in use by a running server.',
    )
    .action(async (file: string, o: DbOptions) =>
      (await import('../run/db.js')).runDbRestore(file, o),
    );
  return new Command('db')
    .description('back up and restore the embedded database')
    .addCommand(backup)
    .addCommand(restore);
}
