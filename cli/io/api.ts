// Talking to the review server: base URL and token from options or SIGHTLINE_SERVER /
// SIGHTLINE_TOKEN; HTTP failures mapped to Sightline's exit codes (interfaces.md):
// refused input or credentials → 2, network trouble or a server fault → 3.
import { CliError, EXIT, ioFailure, usageError } from '../errors.js';

export interface ServerOptions {
  server?: string;
  token?: string;
}

export interface ApiClient {
  base: string;
  request<T>(method: string, path: string, body?: unknown): Promise<T>;
}

interface ApiErrorBody {
  error?: { code?: string; message?: string; details?: { path: string; message: string }[] };
}

export function apiClient(o: ServerOptions): ApiClient {
  const raw = o.server ?? process.env.SIGHTLINE_SERVER;
  if (!raw)
    throw usageError(
      'no server: pass --server URL or set SIGHTLINE_SERVER (e.g. http://127.0.0.1:5180)',
    );
  let base: string;
  try {
    const u = new URL(raw);
    if (u.protocol !== 'http:' && u.protocol !== 'https:') throw new Error('not http(s)');
    base = u.toString().replace(/\/$/, '');
  } catch {
    throw usageError(`--server: "${raw}" is not an http(s) URL`);
  }
  const token = o.token ?? process.env.SIGHTLINE_TOKEN;
  if (!token)
    throw usageError(
      'no API token: pass --token or set SIGHTLINE_TOKEN (make one in the app under Tokens)',
    );
  return {
    base,
    async request<T>(method: string, path: string, body?: unknown): Promise<T> {
      let res: Response;
      try {
        res = await fetch(base + path, {
          method,
          headers: {
            authorization: `Bearer ${token}`,
            accept: 'application/json',
            ...(body === undefined ? {} : { 'content-type': 'application/json' }),
          },
          body: body === undefined ? undefined : JSON.stringify(body),
          signal: AbortSignal.timeout(120_000),
        });
      } catch (e) {
        const cause = (e as { cause?: { code?: string } }).cause?.code;
        throw ioFailure(`${base}: ${cause ?? (e as Error).message} (is the server running?)`);
      }
      const text = await res.text();
      let parsed: unknown;
      try {
        parsed = text ? JSON.parse(text) : undefined;
      } catch {
        parsed = undefined;
      }
      if (res.ok) return parsed as T;
      const err = (parsed as ApiErrorBody | undefined)?.error;
      const detail = err?.details?.length
        ? ': ' +
          err.details
            .slice(0, 5)
            .map((d) => `${d.path}: ${d.message}`)
            .join('; ')
        : '';
      const message = `${method} ${path}: ${res.status} ${err?.message ?? res.statusText}${detail}`;
      throw new CliError(message, res.status >= 500 || res.status === 429 ? EXIT.io : EXIT.usage);
    },
  };
}
