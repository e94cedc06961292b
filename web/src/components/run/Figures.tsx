import type { ReactNode } from 'react';

/** A row of headline figures: label above, value in tabular figures below. */
export function Figures({
  items,
}: {
  items: { label: string; value: ReactNode; hint?: string }[];
}) {
  return (
    <dl className="grid grid-cols-2 gap-px overflow-hidden rounded-sm border border-rule bg-rule sm:grid-cols-4">
      {items.map((f) => (
        <div key={f.label} className="bg-panel px-3 py-2" title={f.hint}>
          <dt className="text-xs text-ink-soft">{f.label}</dt>
          <dd className="num text-base">{f.value}</dd>
        </div>
      ))}
    </dl>
  );
}

/** A short paragraph saying what the stored result cannot show, and where to see it. */
export function DataNote({ children }: { children: ReactNode }) {
  return <p className="text-xs text-ink-soft">{children}</p>;
}

export function SubHeading({ children }: { children: ReactNode }) {
  return <h3 className="text-sm font-medium">{children}</h3>;
}
