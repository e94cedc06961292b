import { useState, type ReactNode } from 'react';
import type { RunDetail } from '../../api/types';
import { dateTime } from '../../lib/time';

export function PanelHeading({ id, children }: { id: string; children: ReactNode }) {
  return (
    <h2 id={id} className="text-sm font-semibold tracking-wide text-ink-soft uppercase">
      {children}
    </h2>
  );
}

/** A SHA-256 shortened for reading, whole in its tooltip and one click from the clipboard. */
export function Hash({ value, of }: { value: string; of: string }) {
  const [copied, setCopied] = useState<boolean | null>(null);
  async function copy() {
    try {
      await navigator.clipboard.writeText(value);
      setCopied(true);
    } catch {
      setCopied(false);
    }
  }
  return (
    <span className="inline-flex flex-wrap items-baseline gap-x-2">
      <code className="num text-xs" title={value}>
        {value.slice(0, 12)}…{value.slice(-6)}
      </code>
      <button
        type="button"
        onClick={copy}
        aria-label={`Copy the SHA-256 of ${of}`}
        className="text-xs text-accent underline-offset-2 hover:underline"
      >
        copy
      </button>
      <span role="status" className="text-xs text-ink-soft">
        {copied === true ? 'copied' : copied === false ? 'select it from the tooltip' : ''}
      </span>
    </span>
  );
}

/** A parameter value in words: objects become "key value" pairs, null a dash. */
function paramText(v: unknown): string {
  if (v === null || v === undefined) return '—';
  if (typeof v === 'object')
    return Array.isArray(v)
      ? v.map(paramText).join(', ')
      : Object.entries(v as Record<string, unknown>)
          .map(([k, x]) => `${k} ${paramText(x)}`)
          .join(', ');
  return String(v);
}

function Row({ term, children }: { term: ReactNode; children: ReactNode }) {
  return (
    <div className="grid grid-cols-[minmax(6rem,auto)_1fr] gap-x-3 py-0.5">
      <dt className="text-ink-soft">{term}</dt>
      <dd className="min-w-0 break-words">{children}</dd>
    </div>
  );
}

/**
 * How to reproduce the run: its inputs (with SHA-256), parameters, dispersion constant and the
 * software version that made it.
 */
export function ProvenancePanel({ run }: { run: RunDetail }) {
  const result = run.result;
  const params = Object.entries(result.parameters ?? run.parameters ?? {});
  const constant = 'constant' in result ? result.constant : run.constant;
  return (
    <section aria-labelledby="provenance-heading" className="flex flex-col gap-3">
      <PanelHeading id="provenance-heading">How it was made</PanelHeading>
      <div className="flex flex-col gap-1">
        <h3 className="text-sm font-medium">Inputs</h3>
        {result.input.length === 0 ? (
          <p className="text-sm text-ink-soft">No input files recorded.</p>
        ) : (
          <ul className="flex flex-col gap-2 text-sm">
            {result.input.map((f) => (
              <li key={`${f.path}-${f.sha256}`} className="flex flex-col">
                <span className="num text-xs break-all">{f.path}</span>
                <span className="text-xs text-ink-soft">
                  <span className="num">{f.rows}</span> rows · SHA-256{' '}
                  <Hash value={f.sha256} of={f.path} />
                </span>
              </li>
            ))}
          </ul>
        )}
      </div>
      <div className="flex flex-col gap-1">
        <h3 className="text-sm font-medium">Parameters</h3>
        {params.length === 0 ? (
          <p className="text-sm text-ink-soft">Defaults only: no parameters were recorded.</p>
        ) : (
          <dl className="text-xs">
            {params.map(([k, v]) => (
              <Row key={k} term={<span className="num">{k}</span>}>
                <span className="num">{paramText(v)}</span>
              </Row>
            ))}
          </dl>
        )}
      </div>
      <dl className="text-xs">
        <Row term="Constant">
          {constant ? (
            <>
              {constant.name}{' '}
              <span className="num" title="s MHz² pc⁻¹ cm³">
                K = {constant.value.toPrecision(11)}
              </span>{' '}
              <span className="text-ink-soft">s MHz² pc⁻¹ cm³</span>
            </>
          ) : (
            <span className="text-ink-soft">not used by this analysis</span>
          )}
        </Row>
        <Row term="Software">
          {result.software.name} <span className="num">{result.software.version}</span>
        </Row>
        {result.created_utc && (
          <Row term="Computed">
            <span className="num">{dateTime(result.created_utc)}</span>
          </Row>
        )}
        <Row term="Schema">
          <span className="num">{result.schema}</span>
        </Row>
      </dl>
    </section>
  );
}

/** The cautions the analysis attached to its result, as one plain note. */
export function CautionNote({ cautions }: { cautions: string[] | undefined }) {
  if (!cautions?.length) return null;
  return (
    <div role="note" className="rounded-sm border-l-4 border-ink-soft bg-panel px-3 py-2 text-sm">
      <p>
        <span className="font-semibold">Caution. </span>
        {cautions.join(' ')}
      </p>
    </div>
  );
}

export interface WarningItem {
  /** where it applies: "MJD 60200.391", "1650 MHz", "SBP-F" */
  where: string;
  text: string;
}

/** Every warning of the result, listed under what it applies to; long lists fold. */
export function WarningList({ items, of }: { items: WarningItem[]; of: string }) {
  if (!items.length)
    return (
      <p className="text-sm text-ink-soft">
        No warnings: every {of} passed the analysis&rsquo;s checks.
      </p>
    );
  const places = new Set(items.map((i) => i.where)).size;
  return (
    <details open={items.length <= 6} className="rounded-sm border border-rule bg-panel text-sm">
      <summary className="cursor-pointer px-3 py-1.5 font-medium">
        <span className="num">{items.length}</span> warning{items.length === 1 ? '' : 's'} on{' '}
        <span className="num">{places}</span> {of}
        {places === 1 ? '' : 's'}
      </summary>
      <ul
        className="max-h-64 overflow-auto border-t border-rule px-3 py-1.5"
        tabIndex={0}
        aria-label="Warnings"
      >
        {items.map((w, i) => (
          <li key={i} className="py-0.5">
            <span className="num text-xs text-ink-soft">{w.where}</span> — {w.text}
          </li>
        ))}
      </ul>
    </details>
  );
}

/** A table cell's count of warnings: red, with the warnings themselves as its tooltip. */
export function WarningCount({ warnings }: { warnings: string[] }) {
  return warnings.length ? (
    <span className="text-alert" title={warnings.join('\n')}>
      {warnings.length}
    </span>
  ) : (
    '0'
  );
}
