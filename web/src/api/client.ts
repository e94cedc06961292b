import type { z } from 'zod';

export interface FieldProblem {
  path: string;
  message: string;
}

/** An API failure, carrying the server's `{ error: { code, message, details } }` when it sent one. */
export class ApiError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly details?: unknown,
  ) {
    super(message);
    this.name = 'ApiError';
  }

  /** field problems of a 400 (`[{ path, message }]`), or none */
  get fields(): FieldProblem[] {
    return Array.isArray(this.details) ? (this.details as FieldProblem[]) : [];
  }
}

interface ErrorBody {
  error?: { code?: unknown; message?: unknown; details?: unknown };
}

async function readJson(res: Response): Promise<unknown> {
  const text = await res.text();
  if (!text) return undefined;
  try {
    return JSON.parse(text);
  } catch {
    return undefined;
  }
}

/** Someone (the session layer) may want to hear when the server says "sign in first". */
let onUnauthenticated: (() => void) | undefined;
export function setUnauthenticatedHandler(f: (() => void) | undefined) {
  onUnauthenticated = f;
}

/** Call the API: JSON in, JSON out, the session cookie along; errors become ApiError. */
export async function api<T>(
  method: 'GET' | 'POST' | 'PATCH' | 'DELETE',
  url: string,
  body?: unknown,
  signal?: AbortSignal,
): Promise<T> {
  let res: Response;
  try {
    res = await fetch(url, {
      method,
      credentials: 'same-origin',
      headers: {
        Accept: 'application/json',
        ...(body === undefined ? {} : { 'Content-Type': 'application/json' }),
      },
      body: body === undefined ? undefined : JSON.stringify(body),
      signal,
    });
  } catch (e) {
    if ((e as Error).name === 'AbortError') throw e;
    throw new ApiError(0, 'network', 'the server cannot be reached; check your connection');
  }
  const parsed = await readJson(res);
  if (!res.ok) {
    const err = (parsed as ErrorBody | undefined)?.error;
    if (res.status === 401 && !url.startsWith('/api/auth/')) onUnauthenticated?.();
    throw new ApiError(
      res.status,
      typeof err?.code === 'string' ? err.code : 'http_error',
      typeof err?.message === 'string' ? err.message : `${url} answered HTTP ${res.status}`,
      err?.details,
    );
  }
  return parsed as T;
}

/** GET a JSON resource and check it against its schema. */
export async function getJson<T extends z.ZodType>(
  url: string,
  schema: T,
  signal?: AbortSignal,
): Promise<z.infer<T>> {
  return schema.parse(await api<unknown>('GET', url, undefined, signal));
}

/** Query string from an object, leaving out empty values. */
export function qs(params: Record<string, string | number | undefined | null>): string {
  const p = new URLSearchParams();
  for (const [k, v] of Object.entries(params))
    if (v !== undefined && v !== null && v !== '') p.set(k, String(v));
  const s = p.toString();
  return s ? `?${s}` : '';
}
