// me, users (admin), API tokens (own; admins also others'), audit and outgoing mail (admin).
import { randomBytes } from 'node:crypto';
import { and, count, desc, eq, type SQL } from 'drizzle-orm';
import { Router } from 'express';
import {
  createTokenBody,
  createUserBody,
  listQuery,
  TOKEN_DAYS,
  TOKEN_SCOPES,
  updateUserBody,
} from '../../shared/schemas/api.js';
import {
  actorOf,
  anyone,
  contributor,
  requireRole,
  scopesOf,
  type Actor,
} from '../auth/middleware.js';
import type { Services } from '../context.js';
import { apikey, audit, mail, session, user } from '../db/schema.js';
import { ApiError, forbidden, notFoundError, parseBody } from '../errors.js';
import { writeAudit } from '../services/audit.js';

const adminOnly = requireRole('admin');

const PERMISSIONS = {
  viewer: ['read'],
  analyst: ['read', 'push', 'comment', 'submit', 'own_tokens'],
  lead: ['read', 'push', 'comment', 'submit', 'own_tokens', 'review'],
  admin: ['read', 'push', 'comment', 'submit', 'own_tokens', 'manage_users', 'read_audit'],
} as const;

function userView(u: typeof user.$inferSelect) {
  return {
    id: u.id,
    email: u.email,
    name: u.name,
    role: u.role,
    disabled: u.banned === true,
    created_at: u.createdAt.toISOString(),
  };
}

function tokenView(k: typeof apikey.$inferSelect) {
  return {
    id: k.id,
    name: k.name,
    start: k.start,
    user_id: k.referenceId,
    enabled: k.enabled !== false,
    last_used_at: k.lastRequest?.toISOString() ?? null,
    expires_at: k.expiresAt?.toISOString() ?? null,
    scopes: scopesOf(k.permissions),
    created_at: k.createdAt.toISOString(),
  };
}

/** Generated passwords: 18 random bytes, base64url (24 characters). */
export const randomPassword = () => randomBytes(18).toString('base64url');

export function peopleRouter(s: Services): Router {
  const r = Router();

  r.get('/me', anyone, (req, res) => {
    const a = actorOf(req);
    res.json({
      id: a.id,
      email: a.email,
      name: a.name,
      role: a.role,
      via: a.via,
      permissions: PERMISSIONS[a.role],
    });
  });

  // ── users (admin) ──
  r.get('/users', adminOnly, async (_req, res) => {
    const rows = await s.db.select().from(user).orderBy(user.email);
    res.json({ items: rows.map(userView) });
  });

  r.post('/users', adminOnly, async (req, res) => {
    const body = parseBody(createUserBody, req.body);
    const email = body.email.toLowerCase();
    const [exists] = await s.db.select({ id: user.id }).from(user).where(eq(user.email, email));
    if (exists) throw new ApiError(409, 'exists', `a user with e-mail ${email} already exists`);
    const password = body.password ?? randomPassword();
    const made = await s.auth.api.createUser({
      body: { email, password, name: body.name, role: body.role as 'admin' },
    });
    await writeAudit(
      s.db,
      actorOf(req),
      {
        action: 'user.create',
        targetType: 'user',
        targetId: made.user.id,
        after: { email, role: body.role },
      },
      String(req.id),
    );
    const [row] = await s.db.select().from(user).where(eq(user.id, made.user.id));
    res
      .status(201)
      .json({ ...userView(row), ...(body.password ? {} : { initial_password: password }) });
  });

  r.patch('/users/:id', adminOnly, async (req, res) => {
    const body = parseBody(updateUserBody, req.body);
    const actor = actorOf(req);
    const id = String(req.params.id);
    const [before] = await s.db.select().from(user).where(eq(user.id, id));
    if (!before) throw notFoundError(`user ${id}`);
    if (id === actor.id && (body.disabled || (body.role && body.role !== 'admin')))
      throw new ApiError(409, 'self_lockout', 'admins cannot demote or disable themselves');
    const after = await s.db.transaction(async (tx) => {
      const [u] = await tx
        .update(user)
        .set({
          ...(body.role ? { role: body.role } : {}),
          ...(body.disabled !== undefined
            ? { banned: body.disabled, banReason: body.disabled ? 'disabled by an admin' : null }
            : {}),
          updatedAt: new Date(),
        })
        .where(eq(user.id, id))
        .returning();
      if (body.role && body.role !== before.role)
        await writeAudit(
          tx,
          actor,
          {
            action: 'user.role',
            targetType: 'user',
            targetId: id,
            before: { role: before.role },
            after: { role: body.role },
          },
          String(req.id),
        );
      if (body.disabled !== undefined && body.disabled !== (before.banned === true))
        await writeAudit(
          tx,
          actor,
          {
            action: body.disabled ? 'user.disable' : 'user.enable',
            targetType: 'user',
            targetId: id,
          },
          String(req.id),
        );
      // a disabled account, or one whose role changed, loses its sessions at once, in the same
      // transaction: the person signs in again into what they may now do (sessions are rows,
      // with no cookie cache, so none outlives this; a disabled owner's tokens are refused by
      // the middleware, and tokens act with the owner's current role)
      if (body.disabled || (body.role && body.role !== before.role))
        await tx.delete(session).where(eq(session.userId, id));
      return u;
    });
    res.json(userView(after));
  });

  // ── API tokens ──
  const mayManage = (actor: Actor, ownerId: string) => {
    if (actor.id !== ownerId && actor.role !== 'admin')
      throw forbidden("only admins manage other people's tokens");
  };

  r.get('/tokens', contributor, async (req, res) => {
    const actor = actorOf(req);
    const all = req.query.user === 'all';
    if (all && actor.role !== 'admin') throw forbidden("only admins list other people's tokens");
    const rows = await s.db
      .select()
      .from(apikey)
      .where(all ? undefined : eq(apikey.referenceId, actor.id))
      .orderBy(desc(apikey.createdAt));
    res.json({ items: rows.map(tokenView) });
  });

  r.post('/tokens', contributor, async (req, res) => {
    const actor = actorOf(req);
    const body = parseBody(createTokenBody, req.body);
    const ownerId = body.user_id ?? actor.id;
    mayManage(actor, ownerId);
    const [owner] = await s.db.select().from(user).where(eq(user.id, ownerId));
    if (!owner) throw notFoundError(`user ${ownerId}`);
    const scopes = body.scopes ?? [...TOKEN_SCOPES];
    const days = body.expires_in_days ?? TOKEN_DAYS.default;
    const made = await s.auth.api.createApiKey({
      body: {
        name: body.name,
        userId: ownerId,
        permissions: { sightline: scopes },
        expiresIn: days * 86_400,
      },
    });
    await writeAudit(
      s.db,
      actor,
      {
        action: 'token.create',
        targetType: 'token',
        targetId: made.id,
        after: { name: body.name, user_id: ownerId, scopes, expires_in_days: days },
      },
      String(req.id),
    );
    const [row] = await s.db.select().from(apikey).where(eq(apikey.id, made.id));
    // the only time the token itself is shown: only its hash is stored
    res.status(201).json({ ...tokenView(row), token: made.key });
  });

  r.delete('/tokens/:id', contributor, async (req, res) => {
    const actor = actorOf(req);
    const id = String(req.params.id);
    const [row] = await s.db.select().from(apikey).where(eq(apikey.id, id));
    if (!row) throw notFoundError(`token ${id}`);
    mayManage(actor, row.referenceId);
    await s.db.transaction(async (tx) => {
      await tx
        .update(apikey)
        .set({ enabled: false, updatedAt: new Date() })
        .where(eq(apikey.id, id));
      await writeAudit(
        tx,
        actor,
        {
          action: 'token.revoke',
          targetType: 'token',
          targetId: id,
          before: { enabled: row.enabled !== false },
          after: { enabled: false, name: row.name, user_id: row.referenceId },
        },
        String(req.id),
      );
    });
    res.status(204).end();
  });

  // ── audit and mail (admin) ──
  r.get('/audit', adminOnly, async (req, res) => {
    const q = parseBody(listQuery, req.query, 'query');
    const where: SQL[] = [];
    if (typeof req.query.action === 'string') where.push(eq(audit.action, req.query.action));
    if (typeof req.query.target === 'string') where.push(eq(audit.targetId, req.query.target));
    const cond = where.length ? and(...where) : undefined;
    const [{ total }] = await s.db.select({ total: count() }).from(audit).where(cond);
    const rows = await s.db
      .select()
      .from(audit)
      .where(cond)
      .orderBy(desc(audit.id))
      .limit(q.page_size)
      .offset((q.page - 1) * q.page_size);
    res.json({
      items: rows.map((a) => ({
        id: a.id,
        actor: a.actorId ? { id: a.actorId, email: a.actorEmail } : null,
        action: a.action,
        target_type: a.targetType,
        target_id: a.targetId,
        before: a.before,
        after: a.after,
        request_id: a.requestId,
        created_at: a.createdAt.toISOString(),
      })),
      page: q.page,
      page_size: q.page_size,
      total,
    });
  });

  r.get('/mail', adminOnly, async (req, res) => {
    const q = parseBody(listQuery, req.query, 'query');
    const rows = await s.db
      .select()
      .from(mail)
      .orderBy(desc(mail.createdAt))
      .limit(q.page_size)
      .offset((q.page - 1) * q.page_size);
    res.json({
      target: s.mailer.target,
      items: rows.map((m) => ({
        id: m.id,
        to: m.toAddress,
        subject: m.subject,
        body: m.body,
        status: m.status,
        attempts: m.attempts,
        error: m.error,
        captured: m.captured !== null,
        created_at: m.createdAt.toISOString(),
        sent_at: m.sentAt?.toISOString() ?? null,
      })),
    });
  });

  return r;
}
