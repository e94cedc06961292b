// Server-side analyses: the `jobs` table is what people see (state, result run, error); the queue
// (./queue.ts, pg-boss in the same database) decides which worker takes each job. The request
// that queues an analysis returns at once and the client polls GET /api/analyses/:id. Workers
// run in the server process (the embedded default) and in any number of `sightline worker`
// processes sharing a PostgreSQL server. A worker claims a job's row before running it and only
// creates the result run when the analysis finishes, so a job handed out again after its worker
// died is safe to run again.
import { hostname } from 'node:os';
import path from 'node:path';
import { and, eq, inArray, sql } from 'drizzle-orm';
import type { Logger } from 'pino';
import type { Db } from '../db/client.js';
import { ROLES, jobs, uploads, user, type Role } from '../db/schema.js';
import { createRun, type RunContext } from '../services/runs.js';
import { AnalysisError, analysisTask, type AnalysisRequest } from './analyses.js';
import type { AnalysisPool } from './pool.js';
import { ANALYSIS_QUEUE, type AnalysisMessage, type JobQueue } from './queue.js';

/** What running an analysis needs from its process: the database, the uploads, links. */
export interface RunnerContext extends RunContext {
  db: Db;
  /** the server's data directory: uploads are read from <dataDir>/<storagePath> */
  dataDir: string;
}

export interface AnalysisRunner {
  /** queue an analysis whose `jobs` row was just inserted (state queued) */
  enqueue(jobId: string): Promise<void>;
  /**
   * Queue again what a stopped process left queued or running. `orphansAreOurs` (the embedded
   * database, which one process owns) hands jobs left running straight back to the queue
   * instead of waiting for their expiry.
   */
  resume(o?: { orphansAreOurs?: boolean }): Promise<void>;
  /** take jobs from the queue in this process, `concurrency` at a time */
  work(concurrency: number): Promise<void>;
  /** this process's worker name, as recorded on the jobs it runs */
  readonly workerName: string;
  /** the queue it sends to and takes from */
  readonly queue: JobQueue;
  /** resolves when every job this process has taken so far has finished */
  idle(): Promise<void>;
  /** stop taking jobs, let running ones finish, stop the queue and the worker threads */
  close(): Promise<void>;
}

export function defaultWorkerName(): string {
  return `${hostname()}:${process.pid}`;
}

export function createAnalysisRunner(o: {
  context: () => RunnerContext;
  queue: JobQueue;
  makePool: () => AnalysisPool;
  logger: Logger;
  workerName?: string;
}): AnalysisRunner {
  const { queue, logger } = o;
  const workerName = o.workerName ?? defaultWorkerName();
  let pool: AnalysisPool | undefined;
  const active = new Set<Promise<void>>();
  const workerIds: string[] = [];
  let closing = false;

  /** Run one analysis; resolves once its outcome is recorded (rejects only when it cannot be). */
  async function execute(jobId: string): Promise<void> {
    const { db, dataDir } = o.context();
    // claim the row: a job already finished (by a worker thought dead) is not run again
    const [claimed] = await db
      .update(jobs)
      .set({
        state: 'running',
        startedAt: new Date(),
        attempts: sql`${jobs.attempts} + 1`,
        worker: workerName,
      })
      .where(and(eq(jobs.id, jobId), inArray(jobs.state, ['queued', 'running'])))
      .returning({ id: jobs.id });
    if (!claimed) return;
    const [row] = await db
      .select({ job: jobs, upload: uploads, owner: user })
      .from(jobs)
      .innerJoin(uploads, eq(jobs.uploadId, uploads.id))
      .innerJoin(user, eq(jobs.createdBy, user.id))
      .where(eq(jobs.id, jobId));
    try {
      pool ??= o.makePool();
      const request = {
        kind: row.job.kind,
        upload_id: row.upload.id,
        params: row.job.params,
      } as AnalysisRequest;
      const result = await pool.run(
        analysisTask(request, {
          filePath: path.join(dataDir, row.upload.storagePath),
          fileName: row.upload.fileName,
        }) as never,
      );
      const role: Role = ROLES.includes(row.owner.role as Role)
        ? (row.owner.role as Role)
        : 'viewer';
      const run = await createRun(
        o.context(),
        { id: row.owner.id, email: row.owner.email, name: row.owner.name, role, via: 'session' },
        { result, title: `${row.job.kind} of ${row.upload.fileName}` },
        { uploadId: row.upload.id },
      );
      await db
        .update(jobs)
        .set({ state: 'done', runId: run.id, error: null, finishedAt: new Date() })
        .where(eq(jobs.id, jobId));
      logger.info({ jobId, kind: row.job.kind, run: run.id, worker: workerName }, 'analysis done');
    } catch (err) {
      const body =
        err instanceof AnalysisError
          ? err.toJSON()
          : { code: 'failed' as const, message: err instanceof Error ? err.message : String(err) };
      if (!(err instanceof AnalysisError) || body.code !== 'invalid_input')
        logger.error({ err, jobId, worker: workerName }, 'analysis failed');
      await db
        .update(jobs)
        .set({ state: 'failed', error: body, finishedAt: new Date() })
        .where(eq(jobs.id, jobId));
    }
  }

  function track(p: Promise<void>): Promise<void> {
    const tracked = p.finally(() => active.delete(tracked));
    active.add(tracked);
    return tracked;
  }

  return {
    workerName,
    queue,
    async enqueue(jobId) {
      await queue.send(jobId);
      // wake this process's own workers rather than wait for their next poll
      for (const id of workerIds) queue.boss.notifyWorker(id);
    },
    async resume({ orphansAreOurs = false } = {}) {
      const { db } = o.context();
      const left = await db
        .select({ id: jobs.id, state: jobs.state })
        .from(jobs)
        .where(inArray(jobs.state, ['queued', 'running']))
        .orderBy(jobs.createdAt);
      const running = left.filter((j) => j.state === 'running').map((j) => j.id);
      if (orphansAreOurs && running.length) {
        // fail() hands an active job back for a retry; retry() revives one out of retries
        for (const id of running)
          await queue.boss.fail(ANALYSIS_QUEUE, id, { message: 'the server stopped' });
        await queue.boss.retry(ANALYSIS_QUEUE, running);
      }
      for (const j of left) await queue.send(j.id);
    },
    async work(concurrency) {
      if (!Number.isInteger(concurrency) || concurrency < 1)
        throw new RangeError(`concurrency must be a positive integer, not ${concurrency}`);
      for (let i = 0; i < concurrency; i++) {
        const id = await queue.boss.work<AnalysisMessage>(
          ANALYSIS_QUEUE,
          { batchSize: 1, pollingIntervalSeconds: queue.pollingIntervalSeconds },
          async ([job]) => {
            // a job fetched while stopping is handed back (pg-boss retries it elsewhere)
            if (closing) throw new Error(`worker ${workerName} is stopping`);
            await track(execute(job.data.jobId));
          },
        );
        workerIds.push(id);
      }
    },
    async idle() {
      while (active.size) await Promise.allSettled([...active]);
    },
    async close() {
      closing = true;
      if (workerIds.length) await queue.boss.offWork(ANALYSIS_QUEUE);
      await this.idle();
      await queue.stop();
      await pool?.close();
    },
  };
}
