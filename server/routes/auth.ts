import { toNodeHandler } from 'better-auth/node';
import { Router } from 'express';
import { rateLimit } from 'express-rate-limit';
import { checkOrigin, publicRoute } from '../auth/middleware.js';
import type { Services } from '../context.js';
import { sendError } from '../errors.js';
import { writeAudit } from '../services/audit.js';

/**
 * The better-auth endpoints Sightline uses. better-auth also serves its admin plugin (set-role,
 * ban-user, impersonate-user, …), its api-key plugin (api-key/create, update, …), update-user
 * and more under the same path; those would bypass the role checks and the audit trail of
 * /api/users and /api/tokens (an admin impersonating a lead could approve runs; a viewer could
 * make a token), so anything not listed here is a 404.
 */
const EXPOSED = new Set([
  'POST /auth/sign-in/email',
  'POST /auth/sign-out',
  'GET /auth/get-session',
  'POST /auth/change-password',
]);

/** better-auth answers errors as `{ message, code }`; the API's shape is `{ error: { code, message } }`. */
async function apiErrorShape(res: Response): Promise<Response> {
  if (res.status < 400 || !/json/i.test(res.headers.get('content-type') ?? '')) return res;
  const body = (await res
    .clone()
    .json()
    .catch(() => null)) as { code?: unknown; message?: unknown; error?: unknown } | null;
  if (!body || typeof body !== 'object' || 'error' in body) return res;
  const code = typeof body.code === 'string' ? body.code.toLowerCase() : 'auth_failed';
  const message = typeof body.message === 'string' ? body.message : res.statusText;
  const headers = new Headers(res.headers);
  headers.delete('content-length');
  return new Response(JSON.stringify({ error: { code, message } }), {
    status: res.status,
    headers,
  });
}

/**
 * The session token lives in the http-only cookie only: better-auth also puts it in the JSON of
 * sign-in (`token`) and get-session (`session.token`), where page scripts could read it.
 */
async function withoutSessionToken(res: Response): Promise<Response> {
  if (res.status >= 300 || !/json/i.test(res.headers.get('content-type') ?? '')) return res;
  const body = (await res
    .clone()
    .json()
    .catch(() => null)) as { token?: unknown; session?: { token?: unknown } } | null;
  if (!body || typeof body !== 'object') return res;
  if (
    !('token' in body) &&
    !(body.session && typeof body.session === 'object' && 'token' in body.session)
  )
    return res;
  delete body.token;
  if (body.session && typeof body.session === 'object') delete body.session.token;
  const headers = new Headers(res.headers);
  headers.delete('content-length');
  return new Response(JSON.stringify(body), { status: res.status, headers });
}

/** The e-mail a sign-in attempt names (for the audit entry of a failure), or null. */
async function claimedEmail(request: Request): Promise<string | null> {
  const body = (await request
    .clone()
    .json()
    .catch(() => null)) as { email?: unknown } | null;
  return body && typeof body.email === 'string' ? body.email.toLowerCase().slice(0, 254) : null;
}

/**
 * better-auth's own endpoints under /api/auth (sign-in/email, sign-out, get-session,
 * change-password). They read the raw body themselves, so this router is mounted before
 * express.json(). Sign-in is limited per client address; better-auth sees the address Express
 * resolved (`trust proxy`), never a client-supplied X-Forwarded-For. State-changing calls get the
 * same origin check as the rest of the API (a cross-site sign-in would be login CSRF).
 */
export function authRouter(s: Services): Router {
  const r = Router();
  const handler = toNodeHandler(async (request: Request) => {
    const signIn =
      request.method === 'POST' && new URL(request.url).pathname.endsWith('/auth/sign-in/email');
    const email = signIn ? await claimedEmail(request) : null;
    const response = await s.auth.handler(request);
    // failed sign-ins are audited (the successful ones by the auth hook, server/services.ts)
    if (signIn && response.status !== 200)
      await writeAudit(s.db, null, {
        action: 'auth.sign_in_failed',
        targetType: 'user',
        targetId: email,
        after: { ip: request.headers.get('x-forwarded-for'), status: response.status },
      }).catch((err: unknown) => s.logger.error({ err }, 'could not audit a failed sign-in'));
    return withoutSessionToken(await apiErrorShape(response));
  });
  // one audit entry per address and minute while it is being refused, not one per attempt
  const limitedAudited = new Map<string, number>();
  const signInLimit = rateLimit({
    windowMs: 60_000,
    limit: s.limits.signInPerMinute,
    standardHeaders: 'draft-8',
    legacyHeaders: false,
    handler: (req, res) => {
      const ip = req.ip ?? req.socket.remoteAddress ?? '';
      const now = Date.now();
      for (const [k, t] of limitedAudited) if (now - t > 60_000) limitedAudited.delete(k);
      const audited = limitedAudited.has(ip)
        ? Promise.resolve()
        : (limitedAudited.set(ip, now),
          writeAudit(s.db, null, {
            action: 'auth.sign_in_limited',
            targetType: 'address',
            targetId: ip,
            after: { limit_per_minute: s.limits.signInPerMinute },
          }));
      void audited
        .catch((err: unknown) => s.logger.error({ err }, 'could not audit a refused sign-in'))
        .then(() =>
          sendError(
            res,
            429,
            'rate_limited',
            'too many sign-in attempts from this address; wait a minute',
          ),
        );
    },
  });
  r.use('/auth', (req, _res, next) => {
    checkOrigin(req, s.trustedOrigins);
    next();
  });
  r.use('/auth/sign-in', signInLimit);
  // open sign-up is off (admins create accounts); say so plainly rather than with a bare 400
  r.post('/auth/sign-up/{*rest}', publicRoute('refuses everyone: sign-up is closed'), (_req, res) =>
    sendError(res, 403, 'sign_up_disabled', 'accounts are created by an admin'),
  );
  r.all(
    '/auth/{*rest}',
    publicRoute('signing in needs no account; only EXPOSED endpoints answer'),
    (req, res) => {
      if (!EXPOSED.has(`${req.method} ${req.path}`)) {
        sendError(res, 404, 'not_found', `no route for ${req.method} ${req.originalUrl}`);
        return;
      }
      req.headers['x-forwarded-for'] = req.ip ?? req.socket.remoteAddress ?? '';
      void handler(req, res);
    },
  );
  return r;
}
