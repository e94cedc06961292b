import {
  createColumnHelper,
  flexRender,
  getCoreRowModel,
  useReactTable,
} from '@tanstack/react-table';
import { useId, useMemo, useState } from 'react';
import { Link } from 'react-router';
import { useAudit } from '../../api/admin';
import type { AuditView } from '../../api/types';
import { dateTime } from '../../lib/time';
import { Empty, ErrorNotice, Loading } from '../QueryState';
import { AdminSection, buttonClass, inputClass, tableClass, td, th } from './AdminSection';

/** Everything the server writes to the audit log (server/routes, server/services). */
const ACTIONS = [
  'auth.sign_in',
  'user.create',
  'user.role',
  'user.disable',
  'user.enable',
  'token.create',
  'token.revoke',
  'upload.create',
  'analysis.queue',
  'run.create',
  'run.submit',
  'run.comment',
  'run.approve',
  'run.return',
  'run.supersede',
  'baseline.set',
  'pulsar.create',
  'pulsar.update',
];

const PAGE_SIZE = 25;

const short = (v: unknown, max = 20): string => {
  const s = typeof v === 'string' ? v : JSON.stringify(v);
  return s === undefined ? '—' : s.length > max ? `${s.slice(0, max - 1)}…` : s;
};

/** "role: analyst → lead" for small changes; key names for larger ones. */
export function compactChange(before: unknown, after: unknown): string {
  const obj = (v: unknown) =>
    v && typeof v === 'object' && !Array.isArray(v) ? (v as Record<string, unknown>) : undefined;
  const b = obj(before);
  const a = obj(after);
  if (!b && !a)
    return before === null && after === null ? '' : `${short(before)} → ${short(after)}`;
  const keys = [...new Set([...Object.keys(b ?? {}), ...Object.keys(a ?? {})])];
  const parts = keys.slice(0, 2).map((k) => {
    if (b && a && k in b && k in a) return `${k}: ${short(b[k])} → ${short(a[k])}`;
    if (a && k in a) return `${k}: ${short(a[k])}`;
    return `${k}: ${short(b?.[k])} → —`;
  });
  return parts.join(' · ') + (keys.length > 2 ? ` · +${keys.length - 2} more` : '');
}

function Change({ row }: { row: AuditView }) {
  const summary = compactChange(row.before, row.after);
  if (!summary) return <span className="text-ink-soft">—</span>;
  return (
    <details className="max-w-md">
      <summary className="num cursor-pointer text-xs break-words">{summary}</summary>
      <div className="mt-1 grid gap-2 sm:grid-cols-2">
        {(['before', 'after'] as const).map((k) => (
          <div key={k}>
            <p className="text-xs font-medium text-ink-soft">{k}</p>
            <pre
              tabIndex={0}
              className="num max-h-64 overflow-auto rounded-sm border border-rule bg-paper p-2 text-xs"
            >
              {row[k] === null || row[k] === undefined ? '—' : JSON.stringify(row[k], null, 2)}
            </pre>
          </div>
        ))}
      </div>
    </details>
  );
}

function Target({ row }: { row: AuditView }) {
  if (!row.target_id) return <span className="text-ink-soft">{row.target_type}</span>;
  const id =
    row.target_type === 'run' ? (
      <Link to={`/runs/${row.target_id}`} className="text-accent hover:underline">
        {row.target_id.slice(0, 8)}
      </Link>
    ) : row.target_type === 'pulsar' ? (
      <Link to={`/pulsars/${encodeURIComponent(row.target_id)}`} className="text-accent">
        {row.target_id}
      </Link>
    ) : (
      <span title={row.target_id}>{short(row.target_id, 9)}</span>
    );
  return (
    <span className="whitespace-nowrap">
      <span className="text-ink-soft">{row.target_type}</span> <span className="num">{id}</span>
    </span>
  );
}

const col = createColumnHelper<AuditView>();

export function AuditSection() {
  const [page, setPage] = useState(1);
  const [action, setAction] = useState('');
  const filterId = useId();
  const q = useAudit({ page, page_size: PAGE_SIZE, action: action || undefined });
  const columns = useMemo(
    () => [
      col.accessor('created_at', {
        header: 'When',
        cell: (c) => (
          <span className="num text-xs whitespace-nowrap">{dateTime(c.getValue())}</span>
        ),
      }),
      col.accessor((r) => r.actor?.email ?? null, {
        id: 'actor',
        header: 'Who',
        cell: (c) => c.getValue() ?? <span className="text-ink-soft">system</span>,
      }),
      col.accessor('action', {
        header: 'Action',
        cell: (c) => <span className="num text-xs">{c.getValue()}</span>,
      }),
      col.display({ id: 'target', header: 'Target', cell: (c) => <Target row={c.row.original} /> }),
      col.display({
        id: 'change',
        header: 'Before → after',
        cell: (c) => <Change row={c.row.original} />,
      }),
      col.accessor('request_id', {
        header: 'Request',
        cell: (c) => (
          <span
            className="num text-xs whitespace-nowrap text-ink-soft"
            title={c.getValue() ?? undefined}
          >
            {c.getValue() ? short(c.getValue(), 9) : '—'}
          </span>
        ),
      }),
    ],
    [],
  );
  const total = q.data?.total ?? 0;
  const pages = Math.max(1, Math.ceil(total / PAGE_SIZE));
  const table = useReactTable({
    data: q.data?.items ?? [],
    columns,
    getCoreRowModel: getCoreRowModel(),
    manualPagination: true,
    pageCount: pages,
  });
  return (
    <AdminSection
      id="admin-audit"
      title="Audit log"
      intro="Every sign-in, change of a user or token, upload, analysis and run state change, newest first. Requests carry the id also written to the server log."
    >
      <div className="flex flex-wrap items-end gap-3">
        <div className="flex flex-col gap-1">
          <label htmlFor={filterId} className="text-sm font-medium">
            Action
          </label>
          <select
            id={filterId}
            value={action}
            onChange={(e) => {
              setAction(e.target.value);
              setPage(1);
            }}
            className={inputClass}
          >
            <option value="">all actions</option>
            {ACTIONS.map((a) => (
              <option key={a} value={a}>
                {a}
              </option>
            ))}
          </select>
        </div>
        {q.data && (
          <p className="pb-2 text-sm text-ink-soft">
            <span className="num">{total}</span> {total === 1 ? 'entry' : 'entries'}
          </p>
        )}
      </div>
      {q.isPending ? (
        <Loading what="the audit log" />
      ) : q.isError ? (
        <ErrorNotice error={q.error} />
      ) : q.data.items.length === 0 ? (
        <Empty>
          {action
            ? `No "${action}" entries. Choose "all actions" to see everything.`
            : 'Nothing recorded yet. Sign-ins and every change appear here as they happen.'}
        </Empty>
      ) : (
        <>
          <div className="overflow-x-auto">
            <table className={`${tableClass} ${q.isPlaceholderData ? 'opacity-60' : ''}`}>
              <thead>
                {table.getHeaderGroups().map((hg) => (
                  <tr key={hg.id} className="border-b border-rule">
                    {hg.headers.map((h) => (
                      <th key={h.id} scope="col" className={th}>
                        {flexRender(h.column.columnDef.header, h.getContext())}
                      </th>
                    ))}
                  </tr>
                ))}
              </thead>
              <tbody>
                {table.getRowModel().rows.map((r) => (
                  <tr key={r.id} className="border-b border-rule last:border-0">
                    {r.getVisibleCells().map((c) => (
                      <td key={c.id} className={td}>
                        {flexRender(c.column.columnDef.cell, c.getContext())}
                      </td>
                    ))}
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
          <nav aria-label="Audit log pages" className="flex items-center gap-3 text-sm">
            <button
              type="button"
              className={buttonClass}
              disabled={page <= 1}
              onClick={() => setPage((p) => Math.max(1, p - 1))}
            >
              Previous page
            </button>
            <span className="text-ink-soft">
              page <span className="num">{page}</span> of <span className="num">{pages}</span>
            </span>
            <button
              type="button"
              className={buttonClass}
              disabled={page >= pages}
              onClick={() => setPage((p) => Math.min(pages, p + 1))}
            >
              Next page
            </button>
          </nav>
        </>
      )}
    </AdminSection>
  );
}
