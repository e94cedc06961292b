import type { ErrorRequestHandler, RequestHandler, Response } from 'express';

/** Every error leaves the API in one shape: `{ error: { code, message } }`. */
export function sendError(res: Response, status: number, code: string, message: string): void {
  res.status(status).json({ error: { code, message } });
}

export const notFound: RequestHandler = (req, res) => {
  sendError(res, 404, 'not_found', `no route for ${req.method} ${req.originalUrl}`);
};

interface HttpErrorLike {
  status?: unknown;
  statusCode?: unknown;
  expose?: unknown;
  message?: unknown;
}

/** Last handler: client errors raised by middleware keep their status; anything else is a 500. */
export const errorHandler: ErrorRequestHandler = (err: HttpErrorLike, _req, res, next) => {
  if (res.headersSent) {
    next(err);
    return;
  }
  const raw = err.status ?? err.statusCode;
  const status = typeof raw === 'number' && raw >= 400 && raw < 600 ? raw : 500;
  if (status === 404) {
    sendError(res, 404, 'not_found', 'not found');
  } else if (status < 500 && err.expose === true && typeof err.message === 'string') {
    sendError(res, status, 'bad_request', err.message);
  } else {
    if (status >= 500) console.error(err);
    sendError(res, status, 'internal', 'internal server error');
  }
};
