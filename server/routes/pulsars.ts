import { eq } from 'drizzle-orm';
import { Router } from 'express';
import { pulsarBody, updatePulsarBody } from '../../shared/schemas/api.js';
import { actorOf, anyone, requireRole } from '../auth/middleware.js';
import type { Services } from '../context.js';
import { pulsars } from '../db/schema.js';
import { ApiError, notFoundError, parseBody } from '../errors.js';
import { writeAudit } from '../services/audit.js';

export function pulsarView(p: typeof pulsars.$inferSelect) {
  return {
    name: p.name,
    ra_deg: p.raDeg,
    dec_deg: p.decDeg,
    period_s: p.periodS,
    dm_ref: p.dmRef,
    is_reference: p.isReference,
    notes: p.notes,
  };
}

/** The pulsar catalogue. Leads and admins decide which pulsars are references (baselines). */
export function pulsarsRouter(s: Services): Router {
  const r = Router();
  const curators = requireRole('lead', 'admin');

  r.get('/pulsars', anyone, async (_req, res) => {
    const rows = await s.db.select().from(pulsars).orderBy(pulsars.name);
    res.json({ items: rows.map(pulsarView) });
  });

  r.get('/pulsars/:name', anyone, async (req, res) => {
    const [p] = await s.db
      .select()
      .from(pulsars)
      .where(eq(pulsars.name, String(req.params.name)));
    if (!p) throw notFoundError(`pulsar ${req.params.name}`);
    res.json(pulsarView(p));
  });

  r.post('/pulsars', curators, async (req, res) => {
    const b = parseBody(pulsarBody, req.body);
    const [made] = await s.db
      .insert(pulsars)
      .values({
        name: b.name,
        raDeg: b.ra_deg ?? null,
        decDeg: b.dec_deg ?? null,
        periodS: b.period_s ?? null,
        dmRef: b.dm_ref ?? null,
        isReference: b.is_reference ?? false,
        notes: b.notes ?? null,
      })
      .onConflictDoNothing({ target: pulsars.name })
      .returning();
    if (!made) throw new ApiError(409, 'exists', `pulsar ${b.name} is already in the catalogue`);
    await writeAudit(
      s.db,
      actorOf(req),
      { action: 'pulsar.create', targetType: 'pulsar', targetId: b.name, after: pulsarView(made) },
      String(req.id),
    );
    res.status(201).json(pulsarView(made));
  });

  r.patch('/pulsars/:name', curators, async (req, res) => {
    const b = parseBody(updatePulsarBody, req.body);
    const name = String(req.params.name);
    const [before] = await s.db.select().from(pulsars).where(eq(pulsars.name, name));
    if (!before) throw notFoundError(`pulsar ${name}`);
    const [after] = await s.db
      .update(pulsars)
      .set({
        ...(b.ra_deg !== undefined ? { raDeg: b.ra_deg } : {}),
        ...(b.dec_deg !== undefined ? { decDeg: b.dec_deg } : {}),
        ...(b.period_s !== undefined ? { periodS: b.period_s } : {}),
        ...(b.dm_ref !== undefined ? { dmRef: b.dm_ref } : {}),
        ...(b.is_reference !== undefined ? { isReference: b.is_reference } : {}),
        ...(b.notes !== undefined ? { notes: b.notes } : {}),
      })
      .where(eq(pulsars.id, before.id))
      .returning();
    await writeAudit(
      s.db,
      actorOf(req),
      {
        action: 'pulsar.update',
        targetType: 'pulsar',
        targetId: name,
        before: pulsarView(before),
        after: pulsarView(after),
      },
      String(req.id),
    );
    res.json(pulsarView(after));
  });

  return r;
}
