// The analysis job queue, kept in the database itself by pg-boss (a well-known PostgreSQL queue;
// version 10 is the newest that runs on Node 20). Jobs are fetched with FOR UPDATE SKIP LOCKED,
// so any number of worker processes sharing one PostgreSQL server (DATABASE_URL) take each job
// exactly once; the embedded database (PGlite) holds the same queue for the server's own
// in-process worker. The queue's job id is the analysis id (the `jobs` row that users see), so
// queueing an analysis twice never makes two queue jobs.
import PgBoss from 'pg-boss';
import type { Logger } from 'pino';
import type { Database } from '../db/client.js';

/** The one queue all server-side analyses go through. */
export const ANALYSIS_QUEUE = 'sightline-analysis';

/** What a queue job carries: only the analysis id; the `jobs` row holds the request. */
export interface AnalysisMessage {
  jobId: string;
}

export interface QueueOptions {
  /**
   * Seconds a taken job may stay active before the queue counts its worker as gone and hands it
   * out again (the heaviest analyses take minutes; default 30 min).
   */
  expireInSeconds?: number;
  /** seconds between a worker's fetches when the queue is empty (pg-boss's minimum is 0.5) */
  pollingIntervalSeconds?: number;
}

export interface JobQueue {
  boss: PgBoss;
  pollingIntervalSeconds: number;
  /** queue an analysis (a no-op when the queue already holds that id) */
  send(jobId: string): Promise<void>;
  stop(): Promise<void>;
}

export async function openJobQueue(
  database: Database,
  logger: Logger,
  o: QueueOptions = {},
): Promise<JobQueue> {
  const pollingIntervalSeconds = o.pollingIntervalSeconds ?? 0.5;
  const boss = new PgBoss({
    db: {
      executeSql: (text: string, values: unknown[]) =>
        database.executeSql(text, values) as Promise<{ rows: never[] }>,
    },
    schema: 'pgboss',
    // cron schedules are not used; maintenance (expiry, archiving) runs in every process and
    // pg-boss serialises it with an advisory lock
    schedule: false,
    supervise: true,
    migrate: true,
  });
  boss.on('error', (err) => logger.error({ err, component: 'queue' }, 'job queue error'));
  await boss.start();
  // createQueue is idempotent in pg-boss 10 (ON CONFLICT DO NOTHING)
  await boss.createQueue(ANALYSIS_QUEUE, {
    name: ANALYSIS_QUEUE,
    // a worker that dies mid-job leaves it active; after the expiry it is handed out again,
    // at most twice, 2 s later
    expireInSeconds: o.expireInSeconds ?? 30 * 60,
    retryLimit: 2,
    retryDelay: 2,
    retentionDays: 7,
  });
  return {
    boss,
    pollingIntervalSeconds,
    async send(jobId) {
      await boss.send(ANALYSIS_QUEUE, { jobId } satisfies AnalysisMessage, { id: jobId });
    },
    async stop() {
      await boss.stop({ graceful: true, wait: true, close: false, timeout: 30_000 });
    },
  };
}
