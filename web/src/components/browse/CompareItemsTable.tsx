import { createColumnHelper } from '@tanstack/react-table';
import type { CompareItem } from '../../../../shared/schemas/review';
import { fixed } from '../../lib/format';
import { DataTable, useSortedTable } from '../DataTable';
import { QUANTITY_LABEL, QUANTITY_UNIT, quantityValue } from '../../lib/runText';

const col = createColumnHelper<CompareItem>();
/** the coarser of the two errors sets the decimals of every number in a row */
const rowErr = (i: CompareItem) => Math.max(i.a_err, i.b_err);
const pm = (i: CompareItem, v: number, e: number) => (
  <>
    {quantityValue(i.quantity, v, rowErr(i))}
    <span className="text-ink-soft"> ± {quantityValue(i.quantity, e, rowErr(i))}</span>
  </>
);
const columns = [
  col.accessor((i) => i.mjd ?? i.freq_mhz ?? 0, {
    id: 'key',
    header: 'Visit or band',
    cell: (c) => <span className="whitespace-nowrap">{c.row.original.key}</span>,
  }),
  col.accessor('quantity', {
    header: 'Quantity',
    cell: (c) => {
      const q = c.getValue();
      return (
        <span className="whitespace-nowrap">
          {QUANTITY_LABEL[q] ?? q}
          {QUANTITY_UNIT[q] && <span className="text-ink-soft"> ({QUANTITY_UNIT[q]})</span>}
        </span>
      );
    },
  }),
  col.accessor('a', {
    header: 'A',
    cell: (c) => pm(c.row.original, c.row.original.a, c.row.original.a_err),
    meta: { numeric: true, cellClass: 'whitespace-nowrap' },
  }),
  col.accessor('b', {
    header: 'B',
    cell: (c) => pm(c.row.original, c.row.original.b, c.row.original.b_err),
    meta: { numeric: true, cellClass: 'whitespace-nowrap' },
  }),
  col.accessor('delta', {
    header: 'Δ = B − A',
    cell: (c) => {
      const v = c.getValue();
      return (v > 0 ? '+' : '') + quantityValue(c.row.original.quantity, v, rowErr(c.row.original));
    },
    meta: { numeric: true, cellClass: 'whitespace-nowrap' },
  }),
  col.accessor('sigma', {
    header: 'σ',
    cell: (c) => quantityValue(c.row.original.quantity, c.getValue(), rowErr(c.row.original)),
    meta: { numeric: true },
  }),
  col.accessor((i) => (i.z === null ? null : Math.abs(i.z)), {
    id: 'z',
    header: 'z = Δ/σ',
    sortUndefined: 'last',
    cell: (c) => {
      const z = c.row.original.z;
      if (z === null) return '—';
      const over = Math.abs(z) > 3;
      return (
        <span className={over ? 'font-medium text-alert' : ''}>
          {(z > 0 ? '+' : '') + fixed(z, 2)}
        </span>
      );
    },
    meta: { numeric: true },
  }),
  col.accessor((i) => (i.z === null ? 0 : Math.abs(i.z)), {
    id: 'beyond',
    header: 'Beyond',
    enableSorting: false,
    cell: (c) => {
      const a = c.getValue();
      return a > 3 ? (
        <span className="font-semibold text-alert">3σ</span>
      ) : a > 1 ? (
        <span>1σ</span>
      ) : (
        <span className="text-ink-soft">—</span>
      );
    },
  }),
];

/** Compared items (visit, band or power law × quantity), sortable; largest |z| first. */
export function CompareItemsTable({ items, caption }: { items: CompareItem[]; caption?: string }) {
  const table = useSortedTable({
    data: items,
    columns,
    initialSort: [{ id: 'z', desc: true }],
    getRowId: (i) => `${i.key}\u0000${i.quantity}`,
  });
  return <DataTable table={table} caption={caption} />;
}
