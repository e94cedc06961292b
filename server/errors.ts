import type { ErrorRequestHandler, RequestHandler, Response } from 'express';
import { ZodError, type ZodType } from 'zod';

/** Every error leaves the API in one shape: `{ error: { code, message, details? } }`. */
export function sendError(
  res: Response,
  status: number,
  code: string,
  message: string,
  details?: unknown,
): void {
  res
    .status(status)
    .json({ error: details === undefined ? { code, message } : { code, message, details } });
}

/** An error a route throws on purpose: status, a stable machine code and a sentence for people. */
export class ApiError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly details?: unknown,
  ) {
    super(message);
  }
}

export const badRequest = (message: string, details?: unknown) =>
  new ApiError(400, 'invalid_request', message, details);
export const forbidden = (message: string) => new ApiError(403, 'forbidden', message);
export const notFoundError = (what: string) => new ApiError(404, 'not_found', `${what} not found`);
export const conflict = (code: string, message: string, details?: unknown) =>
  new ApiError(409, code, message, details);

/** zod issues as `{ path: "result.visits.3.dm_err", message }`, the path rooted at `root`. */
export function issuesOf(err: ZodError, root?: string) {
  return err.issues.map((i) => ({
    path: [...(root ? [root] : []), ...i.path.map(String)].join('.'),
    message: i.message,
  }));
}

/** Parse with a zod schema or throw 400 with the field paths of every problem. */
export function parseBody<T>(schema: ZodType<T>, value: unknown, root?: string): T {
  const r = schema.safeParse(value);
  if (r.success) return r.data;
  throw badRequest('the request does not match the expected shape', issuesOf(r.error, root));
}

export const notFound: RequestHandler = (req, res) => {
  sendError(res, 404, 'not_found', `no route for ${req.method} ${req.originalUrl}`);
};

interface HttpErrorLike {
  status?: unknown;
  statusCode?: unknown;
  expose?: unknown;
  message?: unknown;
  type?: unknown;
  code?: unknown;
}

/** Last handler: client errors raised by middleware keep their status; anything else is a 500. */
export const errorHandler: ErrorRequestHandler = (err: HttpErrorLike, req, res, next) => {
  if (res.headersSent) {
    next(err);
    return;
  }
  if (err instanceof ApiError) {
    sendError(res, err.status, err.code, err.message, err.details);
    return;
  }
  if (err instanceof ZodError) {
    sendError(
      res,
      400,
      'invalid_request',
      'the request does not match the expected shape',
      issuesOf(err),
    );
    return;
  }
  const raw = err.status ?? err.statusCode;
  const status = typeof raw === 'number' && raw >= 400 && raw < 600 ? raw : 500;
  if (status === 404) {
    sendError(res, 404, 'not_found', 'not found');
  } else if (status === 413) {
    sendError(
      res,
      413,
      'too_large',
      typeof err.message === 'string' ? err.message : 'request too large',
    );
  } else if (status < 500 && err.expose === true && typeof err.message === 'string') {
    const code = err.type === 'entity.parse.failed' ? 'invalid_json' : 'bad_request';
    sendError(res, status, code, err.message);
  } else {
    (req as { log?: { error(o: unknown, m: string): void } }).log?.error({ err }, 'request failed');
    if (!(req as { log?: unknown }).log) console.error(err);
    sendError(res, status, 'internal', 'internal server error');
  }
};
