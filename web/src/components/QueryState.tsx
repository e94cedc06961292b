import type { ReactNode } from 'react';
import { ApiError } from '../api/client';

/** Loading, error and empty states, the same everywhere. */
export function Loading({ what }: { what: string }) {
  return (
    <p role="status" className="py-6 text-sm text-ink-soft">
      Loading {what}…
    </p>
  );
}

export function ErrorNotice({ error, action }: { error: unknown; action?: ReactNode }) {
  const message =
    error instanceof ApiError
      ? `${error.message}${error.status ? ` (HTTP ${error.status}, ${error.code})` : ''}`
      : error instanceof Error
        ? error.message
        : String(error);
  return (
    <div role="alert" className="my-3 rounded-sm border border-alert bg-panel px-3 py-2 text-sm">
      <p className="text-alert">{message}</p>
      {error instanceof ApiError && error.fields.length > 0 && (
        <ul className="mt-1 list-disc pl-5 text-ink-soft">
          {error.fields.map((f) => (
            <li key={f.path}>
              <span className="num">{f.path}</span>: {f.message}
            </li>
          ))}
        </ul>
      )}
      {action}
    </div>
  );
}

export function Empty({ children }: { children: ReactNode }) {
  return (
    <div className="rounded-sm border border-dashed border-edge px-4 py-6 text-sm text-ink-soft">
      {children}
    </div>
  );
}

export function PageTitle({ children, aside }: { children: ReactNode; aside?: ReactNode }) {
  return (
    <div className="mb-4 flex flex-wrap items-baseline justify-between gap-3">
      <h1 className="text-xl font-semibold tracking-tight">{children}</h1>
      {aside}
    </div>
  );
}
