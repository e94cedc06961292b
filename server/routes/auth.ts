import { toNodeHandler } from 'better-auth/node';
import { Router } from 'express';
import { rateLimit } from 'express-rate-limit';
import { checkOrigin } from '../auth/middleware.js';
import type { Services } from '../context.js';
import { sendError } from '../errors.js';

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

/**
 * better-auth's own endpoints under /api/auth (sign-in/email, sign-out, get-session,
 * change-password). They read the raw body themselves, so this router is mounted before
 * express.json(). Sign-in is limited per client address; better-auth sees the address Express
 * resolved (`trust proxy`), never a client-supplied X-Forwarded-For. State-changing calls get the
 * same origin check as the rest of the API (a cross-site sign-in would be login CSRF).
 */
export function authRouter(s: Services): Router {
  const r = Router();
  const handler = toNodeHandler(async (request: Request) =>
    withoutSessionToken(await apiErrorShape(await s.auth.handler(request))),
  );
  const signInLimit = rateLimit({
    windowMs: 60_000,
    limit: s.limits.signInPerMinute,
    standardHeaders: 'draft-8',
    legacyHeaders: false,
    handler: (_req, res) =>
      sendError(
        res,
        429,
        'rate_limited',
        'too many sign-in attempts from this address; wait a minute',
      ),
  });
  r.use('/auth', (req, _res, next) => {
    checkOrigin(req, s.trustedOrigins);
    next();
  });
  r.use('/auth/sign-in', signInLimit);
  // open sign-up is off (admins create accounts); say so plainly rather than with a bare 400
  r.post('/auth/sign-up/{*rest}', (_req, res) =>
    sendError(res, 403, 'sign_up_disabled', 'accounts are created by an admin'),
  );
  r.all('/auth/{*rest}', (req, res) => {
    if (!EXPOSED.has(`${req.method} ${req.path}`)) {
      sendError(res, 404, 'not_found', `no route for ${req.method} ${req.originalUrl}`);
      return;
    }
    req.headers['x-forwarded-for'] = req.ip ?? req.socket.remoteAddress ?? '';
    void handler(req, res);
  });
  return r;
}
