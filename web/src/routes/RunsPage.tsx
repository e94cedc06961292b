import {
  createColumnHelper,
  getCoreRowModel,
  getSortedRowModel,
  useReactTable,
  type PaginationState,
  type SortingState,
  type Updater,
} from '@tanstack/react-table';
import { useCallback, useMemo } from 'react';
import { Link, useNavigate, useSearchParams } from 'react-router';
import { useRuns } from '../api/runs';
import type { RunState, RunSummaryView } from '../api/types';
import { DataTable } from '../components/DataTable';
import { summaryLine } from '../lib/runText';
import {
  FILTER_KEYS,
  RunFilters,
  type FilterKey,
  type FilterValues,
} from '../components/browse/RunFilters';
import { Empty, ErrorNotice, Loading, PageTitle } from '../components/QueryState';
import { StateBadge } from '../components/StateBadge';
import { dateTime, KIND_LABEL } from '../lib/time';

const PAGE_SIZES = [10, 25, 50, 100, 200];
const STATE_ORDER: Record<RunState, number> = {
  draft: 0,
  in_review: 1,
  returned: 2,
  approved: 3,
  superseded: 4,
};

const col = createColumnHelper<RunSummaryView>();
const columns = [
  col.accessor((r) => r.pulsar ?? '', {
    id: 'pulsar',
    header: 'Pulsar',
    cell: (c) => (
      <Link
        to={`/runs/${c.row.original.id}`}
        className="font-medium text-accent underline-offset-2 hover:underline"
        aria-label={`${c.row.original.pulsar ?? 'Run'} ${KIND_LABEL[c.row.original.kind] ?? c.row.original.kind}, ${c.row.original.state.replace('_', ' ')}`}
      >
        {c.row.original.pulsar ?? '—'}
      </Link>
    ),
  }),
  col.accessor((r) => KIND_LABEL[r.kind] ?? r.kind, {
    id: 'kind',
    header: 'Kind',
    meta: { cellClass: 'whitespace-nowrap' },
  }),
  col.accessor('state', {
    header: 'State',
    sortingFn: (a, b) => STATE_ORDER[a.original.state] - STATE_ORDER[b.original.state],
    cell: (c) => <StateBadge state={c.getValue()} />,
  }),
  col.display({
    id: 'summary',
    header: 'Result',
    cell: (c) => (
      <span className="text-xs text-ink-soft">
        {c.row.original.title && (
          <span className="block text-sm text-ink">{c.row.original.title}</span>
        )}
        {summaryLine(c.row.original)}
      </span>
    ),
  }),
  col.accessor((r) => r.created_by.email, {
    id: 'created_by',
    header: 'Created by',
    cell: (c) => (
      <span>
        {c.row.original.created_by.name}{' '}
        <span className="block text-xs text-ink-soft">{c.row.original.created_by.email}</span>
      </span>
    ),
  }),
  col.accessor('created_at', {
    id: 'created',
    header: 'Created',
    cell: (c) => dateTime(c.getValue()),
    meta: { cellClass: 'num text-xs whitespace-nowrap' },
  }),
  col.accessor('updated_at', {
    id: 'updated',
    header: 'Updated',
    cell: (c) => dateTime(c.getValue()),
    meta: { cellClass: 'num text-xs whitespace-nowrap' },
  }),
];

/** "2026-12-02" (a day in the reader's zone) → the instant the API filters on. */
function dayBound(day: string, end: boolean): string | undefined {
  if (!/^\d{4}-\d{2}-\d{2}$/.test(day)) return undefined;
  const d = new Date(`${day}T${end ? '23:59:59.999' : '00:00:00'}`);
  return Number.isNaN(d.getTime()) ? undefined : d.toISOString();
}

function parseSort(s: string | null): SortingState {
  if (!s) return [];
  const [id, dir] = s.split('.');
  return id ? [{ id, desc: dir === 'desc' }] : [];
}

export function RunsPage() {
  const [params, setParams] = useSearchParams();
  const navigate = useNavigate();
  const values = Object.fromEntries(
    FILTER_KEYS.map((k) => [k, params.get(k) ?? '']),
  ) as FilterValues;
  const page = Math.max(1, Number(params.get('page')) || 1);
  const size = PAGE_SIZES.includes(Number(params.get('size'))) ? Number(params.get('size')) : 50;
  const sorting = parseSort(params.get('sort'));

  const q = useRuns({
    pulsar: values.pulsar || undefined,
    kind: values.kind || undefined,
    state: values.state || undefined,
    creator: values.creator || undefined,
    from: values.from ? dayBound(values.from, false) : undefined,
    to: values.to ? dayBound(values.to, true) : undefined,
    page,
    page_size: size,
  });

  /** change URL parameters; anything but the page itself sends the reader back to page 1 */
  const update = useCallback(
    (changes: Record<string, string | null>) =>
      setParams(
        (prev) => {
          const next = new URLSearchParams(prev);
          for (const [k, v] of Object.entries(changes)) {
            if (v) next.set(k, v);
            else next.delete(k);
          }
          if (!('page' in changes)) next.delete('page');
          return next;
        },
        { replace: true },
      ),
    [setParams],
  );
  const onFilter = useCallback((k: FilterKey, v: string) => update({ [k]: v }), [update]);
  const clear = () => update(Object.fromEntries(FILTER_KEYS.map((k) => [k, null])));

  const pagination: PaginationState = { pageIndex: page - 1, pageSize: size };
  const data = useMemo(() => q.data?.items ?? [], [q.data]);
  const table = useReactTable({
    data,
    columns,
    getRowId: (r) => r.id,
    state: { sorting, pagination },
    onSortingChange: (u: Updater<SortingState>) => {
      const s = typeof u === 'function' ? u(sorting) : u;
      // sorting keeps the page: it only reorders what is shown
      update({
        sort: s[0] ? `${s[0].id}.${s[0].desc ? 'desc' : 'asc'}` : null,
        page: page > 1 ? String(page) : null,
      });
    },
    onPaginationChange: (u: Updater<PaginationState>) => {
      const p = typeof u === 'function' ? u(pagination) : u;
      const resized = p.pageSize !== size;
      update({
        page: !resized && p.pageIndex > 0 ? String(p.pageIndex + 1) : null,
        size: p.pageSize !== 50 ? String(p.pageSize) : null,
      });
    },
    manualPagination: true,
    rowCount: q.data?.total ?? 0,
    getCoreRowModel: getCoreRowModel(),
    getSortedRowModel: getSortedRowModel(),
    enableSortingRemoval: true,
    sortDescFirst: false,
  });

  const anyFilter = FILTER_KEYS.some((k) => values[k]);
  const total = q.data?.total ?? 0;
  const first = total ? (page - 1) * size + 1 : 0;
  const last = Math.min(total, page * size);

  return (
    <>
      <PageTitle
        aside={
          <Link to="/compare" className="text-sm text-accent underline underline-offset-2">
            Compare two runs
          </Link>
        }
      >
        Runs
      </PageTitle>
      <RunFilters values={values} onChange={onFilter} onClear={clear} />
      {q.isPending ? (
        <Loading what="runs" />
      ) : q.isError ? (
        <ErrorNotice error={q.error} />
      ) : total === 0 ? (
        <Empty>
          {anyFilter ? (
            <>
              No runs match these filters —{' '}
              <button
                type="button"
                onClick={clear}
                className="text-accent underline underline-offset-2"
              >
                clear them
              </button>
              , or push results with <code className="num">sightline runs push</code>.
            </>
          ) : (
            <>
              No runs yet — push results with <code className="num">sightline runs push</code>, or
              start a{' '}
              <Link to="/analyses/new" className="text-accent underline underline-offset-2">
                new analysis
              </Link>
              .
            </>
          )}
        </Empty>
      ) : data.length === 0 ? (
        <Empty>
          This page is past the last run.{' '}
          <button
            type="button"
            onClick={() => update({ page: null })}
            className="text-accent underline underline-offset-2"
          >
            Go to the first page
          </button>
          .
        </Empty>
      ) : (
        <>
          <DataTable
            table={table}
            onRowClick={(r) => navigate(`/runs/${r.id}`)}
            caption={
              <>
                {total} {total === 1 ? 'run' : 'runs'}
                {anyFilter ? (total === 1 ? ' matches' : ' match') : ''}, newest first by creation
                (the server’s order; From and To filter on the creation date). Clicking a column
                header sorts the {data.length} runs on this page only.
                {q.isFetching && (
                  <span role="status" className="ml-2">
                    Updating…
                  </span>
                )}
              </>
            }
          />
          <nav
            aria-label="Pages"
            className="mt-3 flex flex-wrap items-center gap-x-4 gap-y-2 text-sm"
          >
            <button
              type="button"
              onClick={() => table.previousPage()}
              disabled={!table.getCanPreviousPage()}
              className="rounded-sm border border-edge bg-panel px-3 py-1 hover:border-accent disabled:border-rule disabled:text-ink-soft"
            >
              Previous page
            </button>
            <span className="num text-ink-soft">
              {first}–{last} of {total} · page {page} of {Math.max(1, table.getPageCount())}
            </span>
            <button
              type="button"
              onClick={() => table.nextPage()}
              disabled={!table.getCanNextPage()}
              className="rounded-sm border border-edge bg-panel px-3 py-1 hover:border-accent disabled:border-rule disabled:text-ink-soft"
            >
              Next page
            </button>
            <label className="ml-auto flex items-center gap-2 text-ink-soft">
              Rows per page
              <select
                value={size}
                onChange={(e) => table.setPageSize(Number(e.target.value))}
                className="num rounded-sm border border-edge bg-panel px-2 py-1 text-ink"
              >
                {PAGE_SIZES.map((n) => (
                  <option key={n} value={n}>
                    {n}
                  </option>
                ))}
              </select>
            </label>
          </nav>
        </>
      )}
    </>
  );
}
