import { desc, eq } from 'drizzle-orm';
import { Router } from 'express';
import { analysisRequestSchema } from '../../shared/schemas/analysis.js';
import { actorOf, anyone, contributor } from '../auth/middleware.js';
import type { Services } from '../context.js';
import { jobs, uploads } from '../db/schema.js';
import { ApiError, notFoundError, parseBody } from '../errors.js';
import { writeAudit } from '../services/audit.js';

/** Which upload kinds each analysis reads. */
const NEEDS: Record<string, string[]> = {
  'dm-fit': ['toas'],
  'dm-series': ['toas', 'result'],
  'scatter-fit': ['profiles'],
};
const WHAT: Record<string, string> = {
  toas: 'an arrival-time table',
  result: 'a dm-fit result',
  profiles: 'a profile set',
};

function jobView(j: typeof jobs.$inferSelect) {
  return {
    id: j.id,
    url: `/api/analyses/${j.id}`,
    kind: j.kind,
    upload_id: j.uploadId,
    params: j.params,
    state: j.state,
    run_id: j.runId,
    error: j.error,
    created_by: j.createdBy,
    created_at: j.createdAt.toISOString(),
    started_at: j.startedAt?.toISOString() ?? null,
    finished_at: j.finishedAt?.toISOString() ?? null,
    attempts: j.attempts,
    worker: j.worker,
  };
}

/** Any Sightline analysis on an upload, on the server's worker pool; answers 202 at once. */
export function analysesRouter(s: Services): Router {
  const r = Router();

  r.post('/analyses', contributor, async (req, res) => {
    const body = parseBody(analysisRequestSchema, req.body);
    const actor = actorOf(req);
    if (!/^[0-9a-f-]{36}$/i.test(body.upload_id)) throw notFoundError(`upload ${body.upload_id}`);
    const [upload] = await s.db.select().from(uploads).where(eq(uploads.id, body.upload_id));
    if (!upload) throw notFoundError(`upload ${body.upload_id}`);
    if (!NEEDS[body.kind].includes(upload.kind))
      throw new ApiError(
        400,
        'wrong_input_kind',
        `${body.kind} reads ${NEEDS[body.kind].map((k) => WHAT[k]).join(' or ')}; upload ${upload.fileName} holds ${WHAT[upload.kind] ?? upload.kind}`,
        [{ path: 'upload_id', message: `expected ${NEEDS[body.kind].join(' or ')}` }],
      );
    const job = await s.db.transaction(async (tx) => {
      const [made] = await tx
        .insert(jobs)
        .values({ kind: body.kind, uploadId: upload.id, params: body.params, createdBy: actor.id })
        .returning();
      await writeAudit(
        tx,
        actor,
        {
          action: 'analysis.queue',
          targetType: 'job',
          targetId: made.id,
          after: { kind: body.kind, upload: upload.id },
        },
        String(req.id),
      );
      return made;
    });
    try {
      await s.analyses.enqueue(job.id);
    } catch (err) {
      // never leave a job that no worker will take: it is marked failed, and the error is ours
      await s.db
        .update(jobs)
        .set({
          state: 'failed',
          finishedAt: new Date(),
          error: { code: 'failed', message: 'the analysis could not be queued' },
        })
        .where(eq(jobs.id, job.id));
      throw err;
    }
    res.status(202).location(`/api/analyses/${job.id}`).json(jobView(job));
  });

  r.get('/analyses', anyone, async (_req, res) => {
    const rows = await s.db.select().from(jobs).orderBy(desc(jobs.createdAt)).limit(200);
    res.json({ items: rows.map(jobView) });
  });

  r.get('/analyses/:id', anyone, async (req, res) => {
    const id = String(req.params.id);
    if (!/^[0-9a-f-]{36}$/i.test(id)) throw notFoundError(`analysis ${id}`);
    const [row] = await s.db.select().from(jobs).where(eq(jobs.id, id));
    if (!row) throw notFoundError(`analysis ${id}`);
    res.json(jobView(row));
  });

  return r;
}
