import { createColumnHelper } from '@tanstack/react-table';
import { useMemo } from 'react';
import { Link } from 'react-router';
import { useBaselines, usePulsars } from '../api/runs';
import type { BaselineView, PulsarView } from '../api/types';
import { DataTable, useSortedTable } from '../components/DataTable';
import { Position } from '../components/browse/Position';
import { Empty, ErrorNotice, Loading, PageTitle } from '../components/QueryState';
import { fixed } from '../lib/format';
import { KIND_LABEL } from '../lib/time';

interface Row extends PulsarView {
  baselines: BaselineView[];
}

const col = createColumnHelper<Row>();
const columns = [
  col.accessor('name', {
    header: 'Pulsar',
    cell: (c) => (
      <Link
        to={`/pulsars/${encodeURIComponent(c.getValue())}`}
        className="font-medium text-accent underline-offset-2 hover:underline"
      >
        {c.getValue()}
      </Link>
    ),
  }),
  col.accessor('period_s', {
    header: 'Period (ms)',
    cell: (c) => (c.getValue() === null ? '—' : fixed((c.getValue() as number) * 1e3, 3)),
    meta: { numeric: true },
    sortUndefined: 'last',
  }),
  col.accessor('dm_ref', {
    header: 'Reference DM (pc cm⁻³)',
    cell: (c) => (c.getValue() === null ? '—' : fixed(c.getValue() as number, 3)),
    meta: { numeric: true },
  }),
  col.accessor((r) => r.ra_deg ?? -1, {
    id: 'position',
    header: 'Position (RA, Dec)',
    cell: (c) => <Position ra={c.row.original.ra_deg} dec={c.row.original.dec_deg} />,
  }),
  col.accessor('is_reference', {
    header: 'Reference pulsar',
    cell: (c) =>
      c.getValue() ? (
        <span className="font-medium">yes</span>
      ) : (
        <span className="text-ink-soft">no</span>
      ),
  }),
  col.accessor((r) => r.baselines.length, {
    id: 'baselines',
    header: 'Active baselines',
    cell: (c) => {
      const b = c.row.original.baselines;
      if (!b.length)
        return (
          <span className="text-ink-soft">{c.row.original.is_reference ? 'none yet' : '—'}</span>
        );
      return (
        <ul className="flex flex-wrap gap-x-3">
          {b.map((x) => (
            <li key={x.id}>
              <Link
                to={`/runs/${x.run_id}`}
                className="text-accent underline-offset-2 hover:underline"
              >
                {KIND_LABEL[x.kind] ?? x.kind}
              </Link>
            </li>
          ))}
        </ul>
      );
    },
  }),
];

export function PulsarsPage() {
  const pulsars = usePulsars();
  const baselines = useBaselines();
  const rows = useMemo<Row[]>(
    () =>
      (pulsars.data?.items ?? []).map((p) => ({
        ...p,
        baselines: (baselines.data?.items ?? []).filter(
          (b) => b.pulsar === p.name && b.state === 'active',
        ),
      })),
    [pulsars.data, baselines.data],
  );
  const table = useSortedTable({ data: rows, columns, getRowId: (r) => r.name });

  let body;
  if (pulsars.isPending) body = <Loading what="pulsars" />;
  else if (pulsars.isError) body = <ErrorNotice error={pulsars.error} />;
  else if (!rows.length)
    body = (
      <Empty>
        No pulsars in the catalogue yet. Pushing a run adds its pulsar; a lead can add pulsars and
        mark reference pulsars through <code className="num">POST /api/pulsars</code>.
      </Empty>
    );
  else
    body = (
      <>
        {baselines.isError && (
          <ErrorNotice error={baselines.error} action={<p>Baselines are not shown.</p>} />
        )}
        <DataTable
          table={table}
          caption={
            <>
              {rows.length} pulsars. Reference pulsars are re-checked against their approved
              baselines on every pipeline change
              {baselines.isPending ? ' (loading baselines…)' : ''}.
            </>
          }
        />
      </>
    );

  return (
    <>
      <PageTitle>Pulsars</PageTitle>
      {body}
    </>
  );
}
