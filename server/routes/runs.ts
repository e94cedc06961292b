import { stringify } from 'csv-stringify/sync';
import { and, count, desc, eq, gte, inArray, like, lte, or, sql, type SQL } from 'drizzle-orm';
import { Router } from 'express';
import { resultRows } from '../../shared/review/rows.js';
import type { RunResult } from '../../shared/review/summary.js';
import {
  createRunBody,
  listRunsQuery,
  reviewBody,
  submitRunBody,
} from '../../shared/schemas/api.js';
import { actorOf, anyone, contributor } from '../auth/middleware.js';
import type { Services } from '../context.js';
import { audit, baselines, pulsars, reviews, runs, user } from '../db/schema.js';
import { badRequest, parseBody } from '../errors.js';
import { createRun, getRun, reviewRun, reviewView, runView, submitRun } from '../services/runs.js';

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;
export function runId(raw: string | string[] | undefined): string {
  const id = String(raw);
  if (!UUID.test(id))
    throw badRequest(`"${id}" is not a run id`, [{ path: 'id', message: 'expected a UUID' }]);
  return id.toLowerCase();
}

export function runsRouter(s: Services): Router {
  const r = Router();
  const reviewsOf = async (id: string) =>
    (
      await s.db
        .select({ review: reviews, reviewer: { email: user.email, name: user.name } })
        .from(reviews)
        .innerJoin(user, eq(reviews.reviewerId, user.id))
        .where(eq(reviews.runId, id))
        .orderBy(reviews.createdAt)
    ).map((x) => reviewView(x.review, x.reviewer));

  r.get('/runs', anyone, async (req, res) => {
    const q = parseBody(listRunsQuery, req.query, 'query');
    const where: SQL[] = [];
    if (q.pulsar?.length) where.push(inArray(pulsars.name, q.pulsar));
    if (q.kind?.length) where.push(inArray(runs.kind, q.kind));
    if (q.state?.length) where.push(inArray(runs.state, q.state));
    if (q.creator) {
      const c = q.creator === 'me' ? actorOf(req).id : q.creator;
      where.push(c.includes('@') ? eq(user.email, c.toLowerCase()) : eq(runs.createdBy, c));
    }
    if (q.from) where.push(gte(runs.createdAt, q.from));
    if (q.to) where.push(lte(runs.createdAt, q.to));
    const cond = where.length ? and(...where) : undefined;
    const [{ total }] = await s.db
      .select({ total: count() })
      .from(runs)
      .leftJoin(pulsars, eq(runs.pulsarId, pulsars.id))
      .innerJoin(user, eq(runs.createdBy, user.id))
      .where(cond);
    const rows = await s.db
      .select({
        run: {
          id: runs.id,
          kind: runs.kind,
          state: runs.state,
          version: runs.version,
          title: runs.title,
          summary: runs.summary,
          parameters: runs.parameters,
          inputChecksums: runs.inputChecksums,
          softwareVersion: runs.softwareVersion,
          constantName: runs.constantName,
          constantValue: runs.constantValue,
          uploadId: runs.uploadId,
          createdBy: runs.createdBy,
          createdAt: runs.createdAt,
          updatedAt: runs.updatedAt,
          submittedAt: runs.submittedAt,
          decidedAt: runs.decidedAt,
          pulsarId: runs.pulsarId,
        },
        pulsar: pulsars.name,
        isReference: pulsars.isReference,
        creator: { email: user.email, name: user.name },
      })
      .from(runs)
      .leftJoin(pulsars, eq(runs.pulsarId, pulsars.id))
      .innerJoin(user, eq(runs.createdBy, user.id))
      .where(cond)
      .orderBy(desc(runs.createdAt), desc(runs.id))
      .limit(q.page_size)
      .offset((q.page - 1) * q.page_size);
    res.json({
      items: rows.map((x) =>
        runView(
          s,
          { ...x.run, result: null },
          {
            pulsar: x.pulsar,
            isReference: x.isReference ?? false,
            creator: x.creator,
          },
        ),
      ),
      page: q.page,
      page_size: q.page_size,
      total,
    });
  });

  /** What happened to runs lately (state changes, reviews, baselines), for everyone. */
  r.get('/activity', anyone, async (req, res) => {
    const limit = Math.min(100, Math.max(1, Number(req.query.limit) || 30));
    const rows = await s.db
      .select({
        id: audit.id,
        action: audit.action,
        actor: audit.actorEmail,
        targetId: audit.targetId,
        after: audit.after,
        createdAt: audit.createdAt,
        pulsar: pulsars.name,
        kind: runs.kind,
      })
      .from(audit)
      .leftJoin(runs, sql`${audit.targetType} = 'run' and ${runs.id}::text = ${audit.targetId}`)
      .leftJoin(pulsars, eq(runs.pulsarId, pulsars.id))
      .where(or(like(audit.action, 'run.%'), like(audit.action, 'baseline.%')))
      .orderBy(desc(audit.id))
      .limit(limit);
    res.json({
      items: rows.map((x) => {
        const after = (x.after ?? {}) as { pulsar?: string; kind?: string; run?: string };
        return {
          id: x.id,
          action: x.action,
          actor: x.actor,
          run_id: x.action.startsWith('run.') ? x.targetId : (after.run ?? null),
          pulsar: x.pulsar ?? after.pulsar ?? null,
          kind: x.kind ?? after.kind ?? null,
          created_at: x.createdAt.toISOString(),
        };
      }),
    });
  });

  r.post('/runs', contributor, async (req, res) => {
    const body = parseBody(createRunBody, req.body);
    const view = await createRun(s, actorOf(req), body, { requestId: String(req.id) });
    res.status(201).location(`/api/runs/${view.id}`).json(view);
  });

  r.get('/runs/:id', anyone, async (req, res) => {
    const id = runId(req.params.id);
    const { row, view } = await getRun(s, id);
    const list = await reviewsOf(id);
    const [baseline] = await s.db
      .select({ id: baselines.id, state: baselines.state })
      .from(baselines)
      .where(eq(baselines.runId, id))
      .orderBy(desc(baselines.id))
      .limit(1);
    res.json({
      ...view,
      baseline: baseline ?? null,
      reviews: list,
      result: row.run.result,
    });
  });

  r.get('/runs/:id/export', anyone, async (req, res) => {
    const id = runId(req.params.id);
    const format = String(req.query.format ?? 'json');
    if (format !== 'json' && format !== 'csv')
      throw badRequest('format must be json or csv', [
        { path: 'query.format', message: 'json | csv' },
      ]);
    const { row, view } = await getRun(s, id);
    const base = `${view.pulsar ?? 'run'}-${view.kind}-${id.slice(0, 8)}`;
    res.setHeader('Content-Disposition', `attachment; filename="${base}.${format}"`);
    if (format === 'json') {
      res.type('application/json').send(JSON.stringify(row.run.result, null, 2) + '\n');
      return;
    }
    const { head, rows } = resultRows(row.run.result as RunResult);
    res
      .type('text/csv')
      .send(
        stringify([
          head,
          ...rows.map((x) => x.map((c) => (c === null || c === undefined ? '' : c))),
        ]),
      );
  });

  r.post('/runs/:id/submit', contributor, async (req, res) => {
    const body = parseBody(submitRunBody, req.body ?? {});
    res.json(await submitRun(s, actorOf(req), runId(req.params.id), body.version, String(req.id)));
  });

  r.get('/runs/:id/reviews', anyone, async (req, res) => {
    const id = runId(req.params.id);
    await getRun(s, id);
    const list = await reviewsOf(id);
    res.json({ items: list });
  });

  r.post('/runs/:id/reviews', contributor, async (req, res) => {
    const body = parseBody(reviewBody, req.body);
    const out = await reviewRun(s, actorOf(req), runId(req.params.id), body, String(req.id));
    res.status(201).json(out);
  });

  return r;
}
