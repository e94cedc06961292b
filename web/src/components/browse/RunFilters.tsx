import { useEffect, useId, useState, type ReactNode } from 'react';
import { usePulsars } from '../../api/runs';
import { KIND_LABEL } from '../../lib/time';

export const FILTER_KEYS = ['pulsar', 'kind', 'state', 'creator', 'from', 'to'] as const;
export type FilterKey = (typeof FILTER_KEYS)[number];
export type FilterValues = Record<FilterKey, string>;

export const STATE_OPTIONS: [string, string][] = [
  ['draft', 'draft'],
  ['in_review', 'in review'],
  ['approved', 'approved'],
  ['returned', 'returned'],
  ['superseded', 'superseded'],
];

const control =
  'rounded-sm border border-edge bg-panel px-2 py-1 text-sm text-ink focus-visible:border-accent';

function Field({ label, id, children }: { label: string; id: string; children: ReactNode }) {
  return (
    <div className="flex flex-col gap-0.5">
      <label htmlFor={id} className="text-xs font-medium text-ink-soft">
        {label}
      </label>
      {children}
    </div>
  );
}

/** Text that reaches the URL a moment after typing stops (or at once on Enter / leaving it). */
function DebouncedText({
  id,
  value,
  onCommit,
  placeholder,
}: {
  id: string;
  value: string;
  onCommit: (v: string) => void;
  placeholder?: string;
}) {
  const [text, setText] = useState(value);
  useEffect(() => setText(value), [value]);
  useEffect(() => {
    if (text === value) return;
    const t = setTimeout(() => onCommit(text.trim()), 400);
    return () => clearTimeout(t);
  }, [text, value, onCommit]);
  return (
    <input
      id={id}
      type="text"
      value={text}
      placeholder={placeholder}
      onChange={(e) => setText(e.target.value)}
      onBlur={() => text.trim() !== value && onCommit(text.trim())}
      onKeyDown={(e) => {
        if (e.key === 'Enter') onCommit(text.trim());
      }}
      className={`${control} w-44`}
      autoComplete="off"
      spellCheck={false}
    />
  );
}

/** The runs filters; every value lives in the URL so a filtered view can be shared as a link. */
export function RunFilters({
  values,
  onChange,
  onClear,
}: {
  values: FilterValues;
  onChange: (key: FilterKey, value: string) => void;
  onClear: () => void;
}) {
  const base = useId();
  const id = (k: string) => `${base}-${k}`;
  const pulsars = usePulsars();
  const names = pulsars.data?.items.map((p) => p.name) ?? [];
  if (values.pulsar && !names.includes(values.pulsar)) names.push(values.pulsar);
  const any = FILTER_KEYS.some((k) => values[k]);
  return (
    <form
      role="search"
      aria-label="Filter runs"
      onSubmit={(e) => e.preventDefault()}
      className="mb-4 flex flex-wrap items-end gap-x-4 gap-y-3"
    >
      <Field label="Pulsar" id={id('pulsar')}>
        <select
          id={id('pulsar')}
          value={values.pulsar}
          onChange={(e) => onChange('pulsar', e.target.value)}
          className={control}
        >
          <option value="">All pulsars</option>
          {names.map((n) => (
            <option key={n} value={n}>
              {n}
            </option>
          ))}
        </select>
      </Field>
      <Field label="Kind" id={id('kind')}>
        <select
          id={id('kind')}
          value={values.kind}
          onChange={(e) => onChange('kind', e.target.value)}
          className={control}
        >
          <option value="">All kinds</option>
          {Object.entries(KIND_LABEL).map(([k, label]) => (
            <option key={k} value={k}>
              {label}
            </option>
          ))}
        </select>
      </Field>
      <Field label="State" id={id('state')}>
        <select
          id={id('state')}
          value={values.state}
          onChange={(e) => onChange('state', e.target.value)}
          className={control}
        >
          <option value="">All states</option>
          {STATE_OPTIONS.map(([k, label]) => (
            <option key={k} value={k}>
              {label}
            </option>
          ))}
        </select>
      </Field>
      <Field label="Created by" id={id('creator')}>
        <DebouncedText
          id={id('creator')}
          value={values.creator}
          onCommit={(v) => onChange('creator', v)}
          placeholder="e-mail, or “me”"
        />
      </Field>
      <Field label="From" id={id('from')}>
        <input
          id={id('from')}
          type="date"
          value={values.from}
          max={values.to || undefined}
          onChange={(e) => onChange('from', e.target.value)}
          className={`${control} num`}
        />
      </Field>
      <Field label="To" id={id('to')}>
        <input
          id={id('to')}
          type="date"
          value={values.to}
          min={values.from || undefined}
          onChange={(e) => onChange('to', e.target.value)}
          className={`${control} num`}
        />
      </Field>
      <button
        type="button"
        onClick={onClear}
        disabled={!any}
        className="rounded-sm px-2 py-1 text-sm text-accent underline underline-offset-2 hover:text-ink disabled:text-ink-soft disabled:no-underline"
      >
        Clear filters
      </button>
    </form>
  );
}
