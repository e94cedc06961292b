import type { z } from 'zod';

/** An API failure, carrying the server's `{ error: { code, message } }` when it sent one. */
export class ApiError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
  ) {
    super(message);
    this.name = 'ApiError';
  }
}

interface ErrorBody {
  error?: { code?: unknown; message?: unknown };
}

async function readJson(res: Response): Promise<unknown> {
  try {
    return await res.json();
  } catch {
    return undefined;
  }
}

/** GET a JSON resource and check it against its schema. */
export async function getJson<T extends z.ZodType>(
  url: string,
  schema: T,
  signal?: AbortSignal,
): Promise<z.infer<T>> {
  const res = await fetch(url, { headers: { Accept: 'application/json' }, signal });
  const body = await readJson(res);
  if (!res.ok) {
    const err = (body as ErrorBody | undefined)?.error;
    throw new ApiError(
      res.status,
      typeof err?.code === 'string' ? err.code : 'http_error',
      typeof err?.message === 'string' ? err.message : `${url} answered HTTP ${res.status}`,
    );
  }
  return schema.parse(body);
}
