import type { ReactNode } from 'react';

/** One part of the admin page: a heading people can jump to, a line on what it is for. */
export function AdminSection({
  id,
  title,
  intro,
  children,
}: {
  id: string;
  title: string;
  intro?: ReactNode;
  children: ReactNode;
}) {
  return (
    <section aria-labelledby={id} className="flex flex-col gap-3 border-t border-rule pt-5">
      <h2 id={id} className="text-lg font-semibold tracking-tight">
        {title}
      </h2>
      {intro && <p className="max-w-3xl text-sm text-ink-soft">{intro}</p>}
      {children}
    </section>
  );
}

export const th = 'px-3 py-1.5 text-left text-xs font-medium text-ink-soft';
export const td = 'px-3 py-1.5 align-top';
export const tableClass = 'w-full border-collapse rounded-sm border border-rule bg-panel text-sm';
export const buttonClass =
  'rounded-sm border border-edge bg-panel px-2 py-0.5 text-sm hover:border-accent hover:text-accent disabled:cursor-not-allowed disabled:opacity-50';
export const primaryClass =
  'rounded-sm bg-accent px-3 py-1.5 text-sm font-medium text-panel disabled:cursor-not-allowed disabled:opacity-50';
export const inputClass = 'rounded-sm border border-edge bg-panel px-2 py-1.5 text-sm';

/** A header cell: its text, or `{ label, hidden }` for a column named for screen readers only. */
type HeadCell = string | { label: string; hidden?: boolean; numeric?: boolean } | false;

/** The header row of an admin table; `false` cells (columns not shown) are left out. */
export function TableHead({ cells }: { cells: HeadCell[] }) {
  return (
    <thead>
      <tr className="border-b border-rule">
        {cells.map((c) => {
          if (c === false) return null;
          const { label, hidden, numeric } = typeof c === 'string' ? { label: c } : c;
          return (
            <th key={label} scope="col" className={numeric ? `${th} text-right` : th}>
              {hidden ? <span className="sr-only">{label}</span> : label}
            </th>
          );
        })}
      </tr>
    </thead>
  );
}
