import {
  type ColumnDef,
  flexRender,
  getCoreRowModel,
  getSortedRowModel,
  type Header,
  type SortingState,
  type Table,
  useReactTable,
} from '@tanstack/react-table';
import { type ReactNode, useState } from 'react';

declare module '@tanstack/react-table' {
  // eslint-disable-next-line @typescript-eslint/no-unused-vars
  interface ColumnMeta<TData, TValue> {
    /** right-align the column (numbers, monospace tabular figures) */
    numeric?: boolean;
    /** extra classes for the body cells */
    cellClass?: string;
  }
}

const ARIA_SORT = { asc: 'ascending', desc: 'descending' } as const;

/** Class names of the two densities: lists (roomy) and a run's result tables (dense). */
const LOOK = {
  roomy: {
    th: 'px-3 py-1.5',
    td: 'px-3 py-1.5',
    row: 'align-baseline',
    sortButton: (numeric?: boolean) => (numeric ? 'flex-row-reverse' : ''),
    indicator: (dir: false | 'asc' | 'desc') => (dir ? 'text-ink' : 'text-edge'),
    unsorted: '↕',
  },
  dense: {
    th: 'px-2 py-1.5',
    td: 'px-2 py-1 whitespace-nowrap',
    row: '',
    sortButton: () => '',
    indicator: () => 'w-2 text-[10px]',
    unsorted: '',
  },
} as const;
type Density = keyof typeof LOOK;

function SortableHeader<T>({ header, density }: { header: Header<T, unknown>; density: Density }) {
  const label = flexRender(header.column.columnDef.header, header.getContext());
  if (!header.column.getCanSort()) return <>{label}</>;
  const look = LOOK[density];
  const dir = header.column.getIsSorted();
  return (
    <button
      type="button"
      onClick={header.column.getToggleSortingHandler()}
      className={`inline-flex items-baseline gap-1 font-medium hover:text-ink ${look.sortButton(header.column.columnDef.meta?.numeric)}`}
    >
      {label}
      <span aria-hidden="true" className={look.indicator(dir)}>
        {dir === 'asc' ? '▲' : dir === 'desc' ? '▼' : look.unsorted}
      </span>
    </button>
  );
}

/**
 * A TanStack table rendered as a dense, readable <table>: sortable headers are buttons (click or
 * press Enter) and `aria-sort` tells screen readers the order. Column `meta.numeric` right-aligns
 * figures; `meta.cellClass` adds classes to body cells. With `scroll`, long tables scroll inside a
 * box with a sticky header.
 */
export function DataTable<T>({
  table,
  caption,
  hideCaption = false,
  density = 'roomy',
  scroll = false,
  onRowClick,
  rowClassName,
}: {
  table: Table<T>;
  caption?: ReactNode;
  /** keep the caption for screen readers only */
  hideCaption?: boolean;
  density?: Density;
  scroll?: boolean;
  /** a click anywhere on a row (mouse convenience; each row also has a real link) */
  onRowClick?: (row: T) => void;
  rowClassName?: (row: T) => string;
}) {
  const look = LOOK[density];
  return (
    <div
      className={`rounded-sm border border-rule bg-panel ${scroll ? 'max-h-[28rem] overflow-auto' : 'overflow-x-auto'}`}
      tabIndex={scroll ? 0 : undefined}
      role={scroll ? 'region' : undefined}
      aria-label={scroll && typeof caption === 'string' ? caption : undefined}
    >
      <table className="w-full border-collapse text-sm">
        {caption &&
          (hideCaption ? (
            <caption className="sr-only">{caption}</caption>
          ) : (
            <caption className="border-b border-rule px-3 py-2 text-left text-xs text-ink-soft">
              {caption}
            </caption>
          ))}
        <thead className={scroll ? 'sticky top-0 z-10 bg-panel' : undefined}>
          {table.getHeaderGroups().map((g) => (
            <tr key={g.id} className="border-b border-rule text-xs text-ink-soft">
              {g.headers.map((h) => {
                const dir = h.column.getIsSorted();
                return (
                  <th
                    key={h.id}
                    scope="col"
                    aria-sort={dir ? ARIA_SORT[dir] : undefined}
                    className={`${look.th} font-medium whitespace-nowrap ${h.column.columnDef.meta?.numeric ? 'text-right' : 'text-left'}`}
                  >
                    {h.isPlaceholder ? null : <SortableHeader header={h} density={density} />}
                  </th>
                );
              })}
            </tr>
          ))}
        </thead>
        <tbody>
          {table.getRowModel().rows.map((row) => (
            <tr
              key={row.id}
              onClick={
                onRowClick
                  ? (e) => {
                      // links and buttons inside the row keep their own behaviour
                      if ((e.target as HTMLElement).closest('a, button')) return;
                      onRowClick(row.original);
                    }
                  : undefined
              }
              className={`border-b border-rule last:border-0 ${look.row} ${onRowClick ? 'cursor-pointer hover:bg-paper' : ''} ${rowClassName?.(row.original) ?? ''}`}
            >
              {row.getVisibleCells().map((cell) => {
                const meta = cell.column.columnDef.meta;
                return (
                  <td
                    key={cell.id}
                    className={`${look.td} ${meta?.numeric ? 'num text-right' : ''} ${meta?.cellClass ?? ''}`}
                  >
                    {flexRender(cell.column.columnDef.cell, cell.getContext())}
                  </td>
                );
              })}
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  );
}

/** A TanStack table over `data` that sorts on the client, starting from `initialSort`. */
export function useSortedTable<T>({
  data,
  columns,
  initialSort = [],
  getRowId,
}: {
  data: T[];
  // eslint-disable-next-line @typescript-eslint/no-explicit-any
  columns: ColumnDef<T, any>[];
  initialSort?: SortingState;
  getRowId?: (row: T) => string;
}): Table<T> {
  const [sorting, setSorting] = useState<SortingState>(initialSort);
  return useReactTable({
    data,
    columns,
    getRowId,
    state: { sorting },
    onSortingChange: setSorting,
    getCoreRowModel: getCoreRowModel(),
    getSortedRowModel: getSortedRowModel(),
  });
}

/** A client-side sorted table of `data` (a run's result rows): dense, caption for screen readers. */
export function SortableTable<T>({
  data,
  columns,
  caption,
  initialSort = [],
  rowClassName,
  scroll = false,
}: {
  data: T[];
  // eslint-disable-next-line @typescript-eslint/no-explicit-any
  columns: ColumnDef<T, any>[];
  caption: string;
  initialSort?: SortingState;
  rowClassName?: (row: T) => string;
  scroll?: boolean;
}) {
  const table = useSortedTable({ data, columns, initialSort });
  return (
    <DataTable
      table={table}
      caption={caption}
      hideCaption
      density="dense"
      scroll={scroll}
      rowClassName={rowClassName}
    />
  );
}
