// Who is calling: a browser session (cookie) or a robot token (Authorization: Bearer …), and
// whether their role allows the route. Roles and what they may do: interfaces.md "HTTP API".
import { fromNodeHeaders } from 'better-auth/node';
import { eq } from 'drizzle-orm';
import type { NextFunction, Request, RequestHandler, Response } from 'express';
import type { Services } from '../context.js';
import { user as userTable, ROLES, type Role } from '../db/schema.js';
import { ApiError } from '../errors.js';
import { TOKEN_SCOPES, type TokenScope } from '../../shared/schemas/api.js';

export interface Actor {
  id: string;
  email: string;
  name: string;
  role: Role;
  via: 'session' | 'token';
  tokenId?: string;
  /** what a token may do (tokens only) */
  scopes?: TokenScope[];
}

declare module 'express-serve-static-core' {
  interface Request {
    actor?: Actor;
  }
}

const RANK: Record<Role, number> = { viewer: 0, analyst: 1, lead: 2, admin: 3 };
const asRole = (r: unknown): Role => (ROLES.includes(r as Role) ? (r as Role) : 'viewer');

function bearer(req: Request): string | undefined {
  const h = req.headers.authorization;
  if (!h) return undefined;
  const m = /^Bearer\s+(\S+)\s*$/i.exec(h);
  if (!m)
    throw new ApiError(401, 'unauthenticated', 'Authorization header must be "Bearer <token>"');
  return m[1];
}

const SAFE = new Set(['GET', 'HEAD', 'OPTIONS']);

/**
 * Cross-site request forgery guard for cookie sessions (OWASP's "verify origin with standard
 * headers"): a state-changing request must come from a trusted Origin. Browsers send Origin with
 * every POST; without one (curl, scripts) it must not be marked cross-site and must not carry
 * the form-encoded or text bodies a cross-site HTML form can send without a CORS preflight.
 */
export function checkOrigin(req: Request, trusted: string[]): void {
  if (SAFE.has(req.method)) return;
  const origin = req.headers.origin;
  if (origin !== undefined) {
    if (!trusted.includes(origin))
      throw new ApiError(403, 'bad_origin', `requests from ${origin} are not accepted`);
    return;
  }
  if (req.headers['sec-fetch-site'] === 'cross-site')
    throw new ApiError(403, 'bad_origin', 'cross-site requests are not accepted');
  // the two body types an HTML form can send cross-site without a preflight
  const type = req.headers['content-type'] ?? '';
  if (/^(application\/x-www-form-urlencoded|text\/plain)/i.test(type))
    throw new ApiError(415, 'unsupported_media_type', 'send JSON (application/json)');
}

/**
 * A token's scopes from its better-auth permissions ({ sightline: [...] }, stored as JSON text or
 * given parsed); a token made before scopes existed (no permissions) may do all three.
 */
export function scopesOf(permissions: unknown): TokenScope[] {
  let p = permissions;
  if (typeof p === 'string') {
    try {
      p = JSON.parse(p);
    } catch {
      return [];
    }
  }
  if (p === null || p === undefined) return [...TOKEN_SCOPES];
  const list = (p as { sightline?: unknown }).sightline;
  return Array.isArray(list) ? TOKEN_SCOPES.filter((x) => list.includes(x)) : [];
}

/** Routes a token never reaches, whatever its scopes: accounts and tokens are managed by people. */
const PEOPLE_ONLY = /^\/api\/(users|tokens|auth)(\/|$)/;

/** The scope a request needs when it comes with a token (interfaces.md, README "API tokens"). */
export function scopeNeeded(method: string, path: string): TokenScope | 'session' {
  if (PEOPLE_ONLY.test(path) && !SAFE.has(method)) return 'session';
  if (SAFE.has(method)) return 'read';
  if (method === 'POST' && /^\/api\/baselines\/check\/?$/.test(path)) return 'check';
  return 'push';
}

function checkScope(req: Request, scopes: TokenScope[]): void {
  const path = req.originalUrl.split('?')[0];
  const need = scopeNeeded(req.method, path);
  if (need === 'session')
    throw new ApiError(
      403,
      'session_required',
      'accounts and tokens are managed signed in, not with a token',
    );
  if (!scopes.includes(need))
    throw new ApiError(
      403,
      'insufficient_scope',
      `this token may ${scopes.join(', ') || 'nothing'}; this request needs the ${need} scope`,
    );
}

export function authenticate(s: Services): RequestHandler {
  return async (req: Request, _res: Response, next: NextFunction) => {
    const token = bearer(req);
    if (token !== undefined) {
      const r = await s.auth.api.verifyApiKey({ body: { key: token } });
      if (!r.valid || !r.key)
        throw new ApiError(401, 'invalid_token', 'the API token is unknown, revoked or expired');
      const [u] = await s.db.select().from(userTable).where(eq(userTable.id, r.key.referenceId));
      if (!u || u.banned) throw new ApiError(401, 'invalid_token', 'the token owner is disabled');
      req.actor = {
        id: u.id,
        email: u.email,
        name: u.name,
        role: asRole(u.role),
        via: 'token',
        tokenId: r.key.id,
        scopes: scopesOf(r.key.permissions),
      };
      checkScope(req, req.actor.scopes!);
      next();
      return;
    }
    const found = await s.auth.api.getSession({ headers: fromNodeHeaders(req.headers) });
    if (found) {
      checkOrigin(req, s.trustedOrigins);
      const u = found.user as typeof found.user & { role?: string | null; banned?: boolean | null };
      if (u.banned) throw new ApiError(401, 'unauthenticated', 'this account is disabled');
      req.actor = { id: u.id, email: u.email, name: u.name, role: asRole(u.role), via: 'session' };
    }
    next();
  };
}

/** The caller must be signed in (any role). */
export function actorOf(req: Request): Actor {
  if (!req.actor) throw new ApiError(401, 'unauthenticated', 'sign in or send an API token');
  return req.actor;
}

/** Who a route admits, kept on its guard so a test can check every route has one. */
export type RouteRule = { roles: readonly Role[] } | { public: string };
export type Guard = RequestHandler & { rule: RouteRule };

/** The caller's role must be one of `roles`. */
export function requireRole(...roles: Role[]): Guard {
  const guard: RequestHandler = (req, _res, next) => {
    const actor = actorOf(req);
    if (!roles.includes(actor.role))
      throw new ApiError(
        403,
        'forbidden',
        `this needs the ${roles.join(' or ')} role; you are ${actor.role}`,
      );
    next();
  };
  return Object.assign(guard, { rule: { roles } });
}

/**
 * A route open to anyone, signed in or not, and why (health checks, signing in). Access is
 * denied by default: every route starts with a guard, this one or requireRole's
 * (tests/api/roles.test.ts walks the routers and fails on a route without one).
 */
export function publicRoute(why: string): Guard {
  const guard: RequestHandler = (_req, _res, next) => next();
  return Object.assign(guard, { rule: { public: why } });
}

export const atLeast = (role: Role): Role[] => ROLES.filter((r) => RANK[r] >= RANK[role]);
/** viewer, analyst, lead, admin: anyone signed in */
export const anyone = requireRole(...ROLES);
/** push / upload / create runs, comment, submit own runs, own tokens */
export const contributor = requireRole('analyst', 'lead', 'admin');
