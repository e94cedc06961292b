// `sightline worker`: take server-side analyses from the queue in the review server's PostgreSQL
// database, run them on worker threads and record each result as a draft run of the person who
// asked — the same work the server's own in-process worker does (server/jobs/runner.ts).
import path from 'node:path';
import { pino } from 'pino';
import { openDatabase, type Database } from '../../server/db/client.js';
import { defaultAnalysisThreads, createAnalysisPool } from '../../server/jobs/pool.js';
import { openJobQueue } from '../../server/jobs/queue.js';
import { createAnalysisRunner } from '../../server/jobs/runner.js';
import { DEFAULT_PORT } from '../../server/config.js';
import { CliError, EXIT, usageError } from '../errors.js';

export interface WorkerOptions {
  threads?: number;
  name?: string;
  dataDir?: string;
  quiet?: boolean;
}

/** The schema must be the server's: a worker never migrates (two could race each other). */
async function checkSchema(database: Database): Promise<void> {
  try {
    await database.executeSql('SELECT id, attempts, worker FROM jobs LIMIT 0');
  } catch (e) {
    throw new CliError(
      `${database.location} holds no Sightline tables of this version (${(e as Error).message}): start the review server on it once first (\`sightline serve\` migrates the database)`,
      EXIT.io,
    );
  }
}

export async function runWorker(o: WorkerOptions, env = process.env): Promise<void> {
  const url = env.DATABASE_URL;
  if (!url)
    throw usageError(
      'sightline worker needs DATABASE_URL (a PostgreSQL server): the embedded database belongs to the server process, which runs its own worker',
    );
  const dataDir = path.resolve(o.dataDir ?? env.SIGHTLINE_DATA_DIR ?? 'data');
  const threads = o.threads ?? defaultAnalysisThreads();
  const logger = pino(
    { level: o.quiet ? 'warn' : (env.LOG_LEVEL ?? 'info'), base: { component: 'worker' } },
    pino.destination(2),
  );
  let database: Database;
  try {
    database = await openDatabase({ url, dataDir });
  } catch (e) {
    throw new CliError(`cannot reach the database: ${(e as Error).message}`, EXIT.io);
  }
  let runner;
  try {
    await checkSchema(database);
    const queue = await openJobQueue(database, logger);
    runner = createAnalysisRunner({
      context: () => ({
        db: database.db,
        dataDir,
        publicUrl: env.SIGHTLINE_PUBLIC_URL || `http://127.0.0.1:${DEFAULT_PORT}`,
      }),
      queue,
      makePool: () => createAnalysisPool({ maxThreads: threads }),
      logger,
      workerName: o.name,
    });
    await runner.work(threads);
  } catch (e) {
    await database.close();
    throw e;
  }
  logger.info(
    { worker: runner.workerName, threads, database: database.location, dataDir },
    'taking analyses from the queue',
  );
  const stopped = runner;
  await new Promise<void>((resolve) => {
    const stop = () => {
      logger.info({ worker: stopped.workerName }, 'stopping after the analyses under way');
      void stopped
        .close()
        .then(() => database.close())
        .then(resolve, (err: unknown) => {
          logger.error({ err }, 'the worker did not stop cleanly');
          resolve();
        });
    };
    process.once('SIGINT', stop);
    process.once('SIGTERM', stop);
  });
}
