// Correction runs: create, submit, review. State rules (interfaces.md, brief.md):
// draft → in_review → approved | returned; returned → in_review again; an approved run replaced
// by a newer approval of the same pulsar and kind becomes superseded. A lead never approves their
// own run, and approvals carry the version the lead reviewed (optimistic concurrency → 409).
import { and, eq, ne, sql } from 'drizzle-orm';
import { kindOf, sourcesOf, summarise } from '../../shared/review/summary.js';
import type { CreateRunBody, ReviewBody } from '../../shared/schemas/api.js';
import type { Actor } from '../auth/middleware.js';
import type { Services } from '../context.js';
import type { Db } from '../db/client.js';
import { baselines, pulsars, reviews, rfiChannels, runs, user } from '../db/schema.js';
import { ApiError, badRequest, conflict, forbidden, notFoundError } from '../errors.js';
import { queueMail, type Notice } from '../mail/mailer.js';
import { writeAudit } from './audit.js';

type RunRow = typeof runs.$inferSelect;
type Tx = Parameters<Parameters<Db['transaction']>[0]>[0];

/**
 * What creating a run needs: the database and the public URL for links, and the mailer when
 * there is one in this process (a `sightline worker` has none: mail it queues waits in the
 * outbox table for the server's mailer, which sends it on its timer).
 */
export type RunContext = Pick<Services, 'db' | 'publicUrl'> & {
  mailer?: Pick<Services['mailer'], 'flush'>;
};

export function runUrl(s: Pick<Services, 'publicUrl'>, id: string): string {
  return `${s.publicUrl.replace(/\/$/, '')}/runs/${id}`;
}

/** The API's view of a run (snake_case, like every Sightline JSON). */
export function runView(
  s: Pick<Services, 'publicUrl'>,
  r: RunRow,
  extra: { pulsar: string | null; isReference?: boolean; creator: { email: string; name: string } },
) {
  return {
    id: r.id,
    url: runUrl(s, r.id),
    kind: r.kind,
    state: r.state,
    version: r.version,
    title: r.title,
    pulsar: extra.pulsar,
    is_reference: extra.isReference ?? false,
    summary: r.summary,
    parameters: r.parameters,
    input: r.inputChecksums,
    software_version: r.softwareVersion,
    constant: r.constantName ? { name: r.constantName, value: r.constantValue } : null,
    created_by: { id: r.createdBy, email: extra.creator.email, name: extra.creator.name },
    upload_id: r.uploadId,
    created_at: r.createdAt.toISOString(),
    updated_at: r.updatedAt.toISOString(),
    submitted_at: r.submittedAt?.toISOString() ?? null,
    decided_at: r.decidedAt?.toISOString() ?? null,
  };
}

async function pulsarFor(tx: Tx, name: string) {
  const [found] = await tx.select().from(pulsars).where(eq(pulsars.name, name));
  if (found) return found;
  // a pulsar the server has not seen yet: catalogue it (not a reference until a lead says so)
  const [made] = await tx
    .insert(pulsars)
    .values({ name })
    .onConflictDoNothing({ target: pulsars.name })
    .returning();
  if (made) return made;
  const [again] = await tx.select().from(pulsars).where(eq(pulsars.name, name));
  return again;
}

async function leadsNotice(tx: Tx, s: RunContext, run: RunRow, pulsar: string, by: Actor) {
  const leads = await tx
    .select({ email: user.email })
    .from(user)
    .where(and(eq(user.role, 'lead'), sql`coalesce(${user.banned}, false) = false`));
  return leads
    .filter((l) => l.email !== by.email)
    .map((l): Notice => ({
      to: l.email,
      subject: `[Sightline] ${pulsar} ${run.kind} run waiting for review`,
      body: `${by.name} <${by.email}> submitted a ${run.kind} run of ${pulsar} for review.\n\n${runUrl(s, run.id)}\n`,
    }));
}

export async function createRun(
  s: RunContext,
  actor: Actor,
  body: CreateRunBody,
  opts: { requestId?: string; uploadId?: string } = {},
) {
  const result = body.result;
  const kind = kindOf(result);
  const sources = sourcesOf(result);
  if (sources.length !== 1)
    throw badRequest(
      sources.length === 0
        ? 'the result holds no visits, points or bands'
        : `a run holds one pulsar's results; this one has ${sources.length} (${sources.join(', ')}): split the input per pulsar`,
      [{ path: 'result', message: 'expected exactly one source' }],
    );
  const constant = 'constant' in result ? result.constant : undefined;
  const created = await s.db.transaction(async (tx) => {
    const pulsar = await pulsarFor(tx, sources[0]);
    const now = new Date();
    const [run] = await tx
      .insert(runs)
      .values({
        pulsarId: pulsar.id,
        kind,
        state: body.submit ? 'in_review' : 'draft',
        title: body.title ?? null,
        parameters: result.parameters ?? {},
        summary: summarise(result),
        result,
        inputChecksums: result.input,
        softwareVersion: result.software.version,
        constantName: constant?.name ?? null,
        constantValue: constant?.value ?? null,
        uploadId: opts.uploadId ?? null,
        createdBy: actor.id,
        submittedAt: body.submit ? now : null,
      })
      .returning();
    // a scint run's flagged channels join its receiver's interference memory (GET /api/rfi)
    if (result.schema === 'sightline/scint@1' && result.receiver && result.rfi.channels.length)
      await tx.insert(rfiChannels).values(
        result.rfi.channels.map((c) => ({
          runId: run.id,
          receiver: result.receiver as string,
          channel: c.channel,
          freqMhz: c.freq_mhz,
          channelMhz: result.channel_mhz,
          kind: c.kind,
        })),
      );
    const snapshot = { state: run.state, version: run.version, kind, pulsar: pulsar.name };
    await writeAudit(
      tx,
      actor,
      { action: 'run.create', targetType: 'run', targetId: run.id, after: snapshot },
      opts.requestId,
    );
    if (body.submit) await queueMail(tx, await leadsNotice(tx, s, run, pulsar.name, actor));
    return { run, pulsar };
  });
  if (body.submit) void s.mailer?.flush();
  return runView(s, created.run, {
    pulsar: created.pulsar.name,
    isReference: created.pulsar.isReference,
    creator: actor,
  });
}

async function loadRun(tx: Tx | Db, id: string) {
  const [row] = await tx
    .select({ run: runs, pulsar: pulsars, creator: { email: user.email, name: user.name } })
    .from(runs)
    .leftJoin(pulsars, eq(runs.pulsarId, pulsars.id))
    .innerJoin(user, eq(runs.createdBy, user.id))
    .where(eq(runs.id, id));
  if (!row) throw notFoundError(`run ${id}`);
  return row;
}

/** Read one run with its pulsar and creator; 404 when missing. */
export async function getRun(s: Services, id: string) {
  const row = await loadRun(s.db, id);
  return {
    row,
    view: runView(s, row.run, {
      pulsar: row.pulsar?.name ?? null,
      isReference: row.pulsar?.isReference,
      creator: row.creator,
    }),
  };
}

function staleOrWrongState(
  run: RunRow,
  version: number | undefined,
  allowed: string[],
  verb: string,
) {
  if (version !== undefined && version !== run.version)
    return conflict(
      'stale_version',
      `the run changed since you loaded it (you have version ${version}, it is now ${run.version}, ${run.state}); reload and review again`,
      { current_version: run.version, state: run.state },
    );
  if (!allowed.includes(run.state))
    return conflict('wrong_state', `a ${run.state} run cannot be ${verb}`, {
      current_version: run.version,
      state: run.state,
    });
  return null;
}

export async function submitRun(
  s: Services,
  actor: Actor,
  id: string,
  version: number | undefined,
  requestId?: string,
) {
  const out = await s.db.transaction(async (tx) => {
    const { run, pulsar } = await loadRun(tx, id);
    if (run.createdBy !== actor.id)
      throw forbidden('only the creator of a run submits it for review');
    const problem = staleOrWrongState(run, version, ['draft', 'returned'], 'submitted');
    if (problem) throw problem;
    const [updated] = await tx
      .update(runs)
      .set({
        state: 'in_review',
        version: run.version + 1,
        submittedAt: new Date(),
        updatedAt: new Date(),
      })
      .where(and(eq(runs.id, id), eq(runs.version, run.version)))
      .returning();
    if (!updated) throw conflict('stale_version', 'the run changed at the same moment; reload it');
    await writeAudit(
      tx,
      actor,
      {
        action: 'run.submit',
        targetType: 'run',
        targetId: id,
        before: { state: run.state, version: run.version },
        after: { state: updated.state, version: updated.version },
      },
      requestId,
    );
    await queueMail(tx, await leadsNotice(tx, s, updated, pulsar?.name ?? '?', actor));
    return { updated, pulsar };
  });
  void s.mailer.flush();
  return runView(s, out.updated, {
    pulsar: out.pulsar?.name ?? null,
    isReference: out.pulsar?.isReference,
    creator: await creatorOf(s, out.updated),
  });
}

async function creatorOf(s: Services, run: RunRow) {
  const [c] = await s.db
    .select({ email: user.email, name: user.name })
    .from(user)
    .where(eq(user.id, run.createdBy));
  return c ?? { email: '', name: '' };
}

export async function reviewRun(
  s: Services,
  actor: Actor,
  id: string,
  body: ReviewBody,
  requestId?: string,
) {
  const out = await s.db.transaction(async (tx) => {
    const { run, pulsar, creator } = await loadRun(tx, id);
    const pulsarName = pulsar?.name ?? '?';
    if (body.decision === 'comment') {
      const [review] = await tx
        .insert(reviews)
        .values({
          runId: id,
          decision: 'comment',
          comment: body.comment,
          reviewerId: actor.id,
          runVersion: run.version,
        })
        .returning();
      await writeAudit(
        tx,
        actor,
        { action: 'run.comment', targetType: 'run', targetId: id, after: { review: review.id } },
        requestId,
      );
      return { run, pulsar, creator, review, notices: 0 };
    }
    if (actor.role !== 'lead')
      throw forbidden(`approving or returning a run needs the lead role; you are ${actor.role}`);
    if (run.createdBy === actor.id)
      throw new ApiError(403, 'own_run', 'a lead never approves or returns their own run');
    const problem = staleOrWrongState(run, body.version, ['in_review'], `${body.decision}ed`);
    if (problem) throw problem;
    const approve = body.decision === 'approve';
    // Approvals of one pulsar take turns: under READ COMMITTED two leads approving two runs of
    // the same pulsar and kind at once would each miss the other's uncommitted approval, leaving
    // both approved (seen in the crash test on PostgreSQL). Locking the pulsar's row makes the
    // second wait, and its statements then see the first one's commit.
    if (approve && run.pulsarId !== null)
      await tx
        .select({ id: pulsars.id })
        .from(pulsars)
        .where(eq(pulsars.id, run.pulsarId))
        .for('update');
    const now = new Date();
    const [updated] = await tx
      .update(runs)
      .set({
        state: approve ? 'approved' : 'returned',
        version: run.version + 1,
        decidedAt: now,
        updatedAt: now,
      })
      .where(and(eq(runs.id, id), eq(runs.version, run.version), eq(runs.state, 'in_review')))
      .returning();
    if (!updated) throw conflict('stale_version', 'the run changed at the same moment; reload it');
    const [review] = await tx
      .insert(reviews)
      .values({
        runId: id,
        decision: body.decision,
        comment: body.comment,
        reviewerId: actor.id,
        runVersion: run.version,
      })
      .returning();
    await writeAudit(
      tx,
      actor,
      {
        action: approve ? 'run.approve' : 'run.return',
        targetType: 'run',
        targetId: id,
        before: { state: run.state, version: run.version },
        after: { state: updated.state, version: updated.version, review: review.id },
      },
      requestId,
    );
    if (approve && run.pulsarId !== null) await supersede(tx, actor, updated, requestId);
    if (approve && pulsar?.isReference)
      await setBaseline(tx, actor, updated, pulsarName, requestId);
    const verb = approve ? 'approved' : 'returned';
    await queueMail(tx, [
      {
        to: creator.email,
        subject: `[Sightline] ${pulsarName} ${run.kind} run ${verb}`,
        body:
          `${actor.name} <${actor.email}> ${verb} your ${run.kind} run of ${pulsarName}.` +
          (body.comment ? `\n\n${body.comment}` : '') +
          `\n\n${runUrl(s, id)}\n`,
      },
    ]);
    return { run: updated, pulsar, creator, review, notices: 1 };
  });
  if (out.notices) void s.mailer.flush();
  return {
    run: runView(s, out.run, {
      pulsar: out.pulsar?.name ?? null,
      isReference: out.pulsar?.isReference,
      creator: out.creator,
    }),
    review: reviewView(out.review, actor),
  };
}

/** The previous approved run of this pulsar and kind is replaced: superseded. */
async function supersede(tx: Tx, actor: Actor, approved: RunRow, requestId?: string) {
  const replaced = await tx
    .update(runs)
    .set({ state: 'superseded', version: sql`${runs.version} + 1`, updatedAt: new Date() })
    .where(
      and(
        eq(runs.pulsarId, approved.pulsarId as number),
        eq(runs.kind, approved.kind),
        eq(runs.state, 'approved'),
        ne(runs.id, approved.id),
      ),
    )
    .returning({ id: runs.id, version: runs.version });
  for (const r of replaced)
    await writeAudit(
      tx,
      actor,
      {
        action: 'run.supersede',
        targetType: 'run',
        targetId: r.id,
        before: { state: 'approved' },
        after: { state: 'superseded', version: r.version, by: approved.id },
      },
      requestId,
    );
}

/** Approving a reference pulsar's run makes it the baseline for that pulsar and kind. */
async function setBaseline(
  tx: Tx,
  actor: Actor,
  run: RunRow,
  pulsarName: string,
  requestId?: string,
) {
  const now = new Date();
  const old = await tx
    .update(baselines)
    .set({ state: 'superseded', supersededAt: now })
    .where(
      and(
        eq(baselines.pulsarId, run.pulsarId as number),
        eq(baselines.kind, run.kind),
        eq(baselines.state, 'active'),
      ),
    )
    .returning();
  const [made] = await tx
    .insert(baselines)
    .values({ pulsarId: run.pulsarId as number, kind: run.kind, runId: run.id, setBy: actor.id })
    .returning();
  await writeAudit(
    tx,
    actor,
    {
      action: 'baseline.set',
      targetType: 'baseline',
      targetId: String(made.id),
      before: old[0] ? { run: old[0].runId, baseline: old[0].id } : null,
      after: { run: run.id, pulsar: pulsarName, kind: run.kind },
    },
    requestId,
  );
}

export function reviewView(
  r: typeof reviews.$inferSelect,
  reviewer: { email: string; name: string },
) {
  return {
    id: r.id,
    decision: r.decision,
    comment: r.comment,
    run_version: r.runVersion,
    reviewer: { id: r.reviewerId, email: reviewer.email, name: reviewer.name },
    created_at: r.createdAt.toISOString(),
  };
}
