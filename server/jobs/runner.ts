// Runs queued analyses (the `jobs` table) on the worker pool and turns each result into a draft
// correction run of the person who asked. The request that queues a job returns at once; the
// client polls GET /api/analyses/:id. Jobs left queued or running by a stopped server are taken
// up again at start (`resume`): a job only creates its run when it finishes, so a retry is safe.
import path from 'node:path';
import { eq, inArray } from 'drizzle-orm';
import type { Logger } from 'pino';
import { ROLES, jobs, uploads, user, type Role } from '../db/schema.js';
import type { Services } from '../context.js';
import { createRun } from '../services/runs.js';
import { AnalysisError, analysisTask, type AnalysisRequest } from './analyses.js';
import type { AnalysisPool } from './pool.js';

export interface AnalysisRunner {
  /** start a queued job (returns at once) */
  start(jobId: string): void;
  /** take up jobs a previous server process left unfinished */
  resume(): Promise<void>;
  /** wait for running jobs, then stop the worker threads */
  close(): Promise<void>;
  /** resolves when every job started so far has finished (tests, shutdown) */
  idle(): Promise<void>;
}

export function createAnalysisRunner(
  s: () => Services,
  makePool: () => AnalysisPool,
  logger: Logger,
): AnalysisRunner {
  let pool: AnalysisPool | undefined;
  const active = new Set<Promise<void>>();

  async function execute(jobId: string): Promise<void> {
    const { db } = s();
    const [row] = await db
      .select({ job: jobs, upload: uploads, owner: user })
      .from(jobs)
      .innerJoin(uploads, eq(jobs.uploadId, uploads.id))
      .innerJoin(user, eq(jobs.createdBy, user.id))
      .where(eq(jobs.id, jobId));
    if (!row || row.job.state === 'done' || row.job.state === 'failed') return;
    await db
      .update(jobs)
      .set({ state: 'running', startedAt: new Date() })
      .where(eq(jobs.id, jobId));
    try {
      pool ??= makePool();
      const request = {
        kind: row.job.kind,
        upload_id: row.upload.id,
        params: row.job.params,
      } as AnalysisRequest;
      const result = await pool.run(
        analysisTask(request, {
          filePath: path.join(s().dataDir, row.upload.storagePath),
          fileName: row.upload.fileName,
        }) as never,
      );
      const role: Role = ROLES.includes(row.owner.role as Role)
        ? (row.owner.role as Role)
        : 'viewer';
      const run = await createRun(
        s(),
        { id: row.owner.id, email: row.owner.email, name: row.owner.name, role, via: 'session' },
        { result, title: `${row.job.kind} of ${row.upload.fileName}` },
        { uploadId: row.upload.id },
      );
      await db
        .update(jobs)
        .set({ state: 'done', runId: run.id, finishedAt: new Date() })
        .where(eq(jobs.id, jobId));
    } catch (err) {
      const body =
        err instanceof AnalysisError
          ? err.toJSON()
          : { code: 'failed' as const, message: err instanceof Error ? err.message : String(err) };
      if (!(err instanceof AnalysisError) || body.code !== 'invalid_input')
        logger.error({ err, jobId }, 'analysis failed');
      await db
        .update(jobs)
        .set({ state: 'failed', error: body, finishedAt: new Date() })
        .where(eq(jobs.id, jobId));
    }
  }

  function start(jobId: string): void {
    const p: Promise<void> = execute(jobId)
      .catch((err: unknown) => logger.error({ err, jobId }, 'analysis job could not be recorded'))
      .finally(() => active.delete(p));
    active.add(p);
  }

  return {
    start,
    async resume() {
      const left = await s()
        .db.select({ id: jobs.id })
        .from(jobs)
        .where(inArray(jobs.state, ['queued', 'running']))
        .orderBy(jobs.createdAt);
      for (const j of left) start(j.id);
    },
    async idle() {
      while (active.size) await Promise.allSettled([...active]);
    },
    async close() {
      await this.idle();
      await pool?.close();
    },
  };
}
