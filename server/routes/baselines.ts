import { and, desc, eq, inArray } from 'drizzle-orm';
import { Router } from 'express';
import {
  CompareError,
  compareResults,
  type ComparableResult,
} from '../../shared/review/compare.js';
import { checkRegression } from '../../shared/review/regression.js';
import { kindOf, sourcesOf, type RunResult } from '../../shared/review/summary.js';
import { compareQuery } from '../../shared/schemas/api.js';
import {
  baselineCheckRequestSchema,
  type BaselineCheckEntry,
  type BaselineCheckResponse,
} from '../../shared/schemas/review.js';
import { actorOf, anyone } from '../auth/middleware.js';
import type { Services } from '../context.js';
import { baselineChecks, baselines, pulsars, runs, user } from '../db/schema.js';
import { ApiError, parseBody } from '../errors.js';
import { getRun } from '../services/runs.js';

const worstDeviation = (items: BaselineCheckEntry['items']): number | null =>
  items.reduce<number | null>(
    (m, i) =>
      i.deviation_sigma === null || i.deviation_sigma === undefined
        ? m
        : Math.max(m ?? 0, Math.abs(i.deviation_sigma)),
    null,
  );

/** The software version of the result an entry came from (entries follow results in order). */
function softwareOf(results: { software: { version: string } }[], index: number): string | null {
  let seen = 0;
  for (const r of results) {
    const n = sourcesOf(r as RunResult).length;
    if (index < seen + n) return r.software.version;
    seen += n;
  }
  return null;
}

export function baselinesRouter(s: Services): Router {
  const r = Router();

  r.get('/baselines', anyone, async (req, res) => {
    const all = req.query.all === '1' || req.query.all === 'true';
    const rows = await s.db
      .select({
        b: baselines,
        pulsar: pulsars.name,
        run: { state: runs.state, summary: runs.summary, softwareVersion: runs.softwareVersion },
        setBy: user.email,
      })
      .from(baselines)
      .innerJoin(pulsars, eq(baselines.pulsarId, pulsars.id))
      .innerJoin(runs, eq(baselines.runId, runs.id))
      .innerJoin(user, eq(baselines.setBy, user.id))
      .where(all ? undefined : eq(baselines.state, 'active'))
      .orderBy(pulsars.name, baselines.kind, desc(baselines.id));
    const checks = await s.db
      .selectDistinctOn([baselineChecks.pulsarName, baselineChecks.kind])
      .from(baselineChecks)
      .orderBy(baselineChecks.pulsarName, baselineChecks.kind, desc(baselineChecks.createdAt));
    const lastCheck = new Map(checks.map((c) => [`${c.pulsarName}\u0000${c.kind}`, c]));
    res.json({
      items: rows.map((x) => ({
        last_check: (() => {
          const c =
            x.b.state === 'active' ? lastCheck.get(`${x.pulsar}\u0000${x.b.kind}`) : undefined;
          return c
            ? {
                status: c.status,
                n_failed: c.nFailed,
                worst_deviation_sigma: c.worstDeviationSigma,
                tolerance_sigma: c.toleranceSigma,
                software_version: c.softwareVersion,
                checked_at: c.createdAt.toISOString(),
              }
            : null;
        })(),
        id: x.b.id,
        pulsar: x.pulsar,
        kind: x.b.kind,
        run_id: x.b.runId,
        state: x.b.state,
        run_state: x.run.state,
        summary: x.run.summary,
        software_version: x.run.softwareVersion,
        set_by: x.setBy,
        set_at: x.b.createdAt.toISOString(),
        superseded_at: x.b.supersededAt?.toISOString() ?? null,
      })),
    });
  });

  /** Fresh results of reference pulsars against their approved baselines, item by item. */
  r.post('/baselines/check', anyone, async (req, res) => {
    const body = parseBody(baselineCheckRequestSchema, req.body);
    const wanted = [...new Set(body.results.flatMap((x) => sourcesOf(x as RunResult)))];
    const active = wanted.length
      ? await s.db
          .select({
            pulsar: pulsars.name,
            kind: baselines.kind,
            runId: runs.id,
            result: runs.result,
          })
          .from(baselines)
          .innerJoin(pulsars, eq(baselines.pulsarId, pulsars.id))
          .innerJoin(runs, eq(baselines.runId, runs.id))
          .where(and(eq(baselines.state, 'active'), inArray(pulsars.name, wanted)))
      : [];
    const byKey = new Map(active.map((a) => [`${a.pulsar}\u0000${a.kind}`, a]));
    const results: BaselineCheckEntry[] = [];
    for (const fresh of body.results) {
      const kind = kindOf(fresh);
      for (const source of sourcesOf(fresh as RunResult)) {
        const base = byKey.get(`${source}\u0000${kind}`);
        if (!base) {
          results.push({
            source,
            kind,
            status: 'no_baseline',
            baseline_run_id: null,
            n_failed: 0,
            items: [],
          });
          continue;
        }
        const check = checkRegression(base.result as ComparableResult, fresh as ComparableResult, {
          toleranceSigma: body.tolerance_sigma,
          source,
        });
        results.push({
          source,
          kind,
          status: check.pass ? 'pass' : 'fail',
          baseline_run_id: base.runId,
          n_failed: check.n_failed,
          items: check.items,
        });
      }
    }
    // the verdicts are kept: the overview shows each reference pulsar's last check
    const actor = actorOf(req);
    if (results.length)
      await s.db.insert(baselineChecks).values(
        results.map((x, i) => ({
          pulsarName: x.source,
          kind: x.kind,
          status: x.status,
          baselineRunId: x.baseline_run_id,
          nFailed: x.n_failed,
          worstDeviationSigma: worstDeviation(x.items),
          toleranceSigma: body.tolerance_sigma,
          softwareVersion: softwareOf(body.results, i),
          checkedBy: actor.id,
        })),
      );
    const out: BaselineCheckResponse = {
      schema: 'sightline/baseline-check@1',
      tolerance_sigma: body.tolerance_sigma,
      pass: results.every((x) => x.status !== 'fail'),
      results,
    };
    res.json(out);
  });

  /** Two runs side by side: per-visit (or per-band) differences in σ and what moved most. */
  r.get('/compare', anyone, async (req, res) => {
    const q = parseBody(compareQuery, req.query, 'query');
    const [a, b] = await Promise.all([getRun(s, q.a), getRun(s, q.b)]);
    try {
      const result = compareResults(
        a.row.run.result as ComparableResult,
        b.row.run.result as ComparableResult,
      );
      res.json({ a: a.view, b: b.view, ...result });
    } catch (err) {
      if (err instanceof CompareError) throw new ApiError(400, err.code, err.message);
      throw err;
    }
  });

  return r;
}
