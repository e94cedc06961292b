import { toNodeHandler } from 'better-auth/node';
import { Router } from 'express';
import { rateLimit } from 'express-rate-limit';
import type { Services } from '../context.js';
import { sendError } from '../errors.js';

/**
 * better-auth's own endpoints under /api/auth (sign-in/email, sign-out, get-session, …). They
 * read the raw body themselves, so this router is mounted before express.json(). Sign-in is
 * limited per client address; better-auth sees the address Express resolved (`trust proxy`),
 * never a client-supplied X-Forwarded-For.
 */
export function authRouter(s: Services): Router {
  const r = Router();
  const handler = toNodeHandler(s.auth);
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
  r.use('/auth/sign-in', signInLimit);
  // open sign-up is off (admins create accounts); say so plainly rather than with a bare 400
  r.post('/auth/sign-up/{*rest}', (_req, res) =>
    sendError(res, 403, 'sign_up_disabled', 'accounts are created by an admin'),
  );
  r.all('/auth/{*rest}', (req, res) => {
    req.headers['x-forwarded-for'] = req.ip ?? req.socket.remoteAddress ?? '';
    void handler(req, res);
  });
  return r;
}
