import { Link } from 'react-router';
import type { RunDetail } from '../../api/types';
import { dateTime, KIND_LABEL } from '../../lib/time';
import { StateBadge } from '../StateBadge';

const LINK = 'text-accent underline-offset-2 hover:underline';

/** Who made the run and when, its state, whether it is a baseline, and ways out: export, compare. */
export function RunHeader({ run }: { run: RunDetail }) {
  const kind = KIND_LABEL[run.kind] ?? run.kind;
  const exportUrl = (format: 'json' | 'csv') =>
    `/api/runs/${encodeURIComponent(run.id)}/export?format=${format}`;
  return (
    <header className="mb-6 flex flex-col gap-2 border-b border-rule pb-4">
      <div className="flex flex-wrap items-center gap-x-3 gap-y-1">
        <h1 className="text-xl font-semibold tracking-tight">
          {run.pulsar ?? 'Unknown pulsar'} · {kind}
        </h1>
        <StateBadge state={run.state} />
        {run.baseline?.state === 'active' && (
          <span
            className="rounded-sm border border-accent px-1.5 py-px text-xs font-medium text-accent"
            title="The approved reference for this pulsar and kind: CI checks new fits against it."
          >
            baseline
          </span>
        )}
        {run.baseline?.state === 'superseded' && (
          <span
            className="rounded-sm border border-state-superseded px-1.5 py-px text-xs font-medium text-state-superseded"
            title="Was this pulsar's baseline until a newer run was approved."
          >
            former baseline
          </span>
        )}
        {run.is_reference && !run.baseline && (
          <span className="text-xs text-ink-soft">reference pulsar</span>
        )}
      </div>
      {run.title && <p className="text-base">{run.title}</p>}
      <p className="text-sm text-ink-soft">
        Created by{' '}
        <span className="text-ink" title={run.created_by.email}>
          {run.created_by.name}
        </span>{' '}
        on <span className="num">{dateTime(run.created_at)}</span>
        {run.submitted_at && (
          <>
            {' '}
            · submitted <span className="num">{dateTime(run.submitted_at)}</span>
          </>
        )}
        {run.decided_at && (
          <>
            {' '}
            · decided <span className="num">{dateTime(run.decided_at)}</span>
          </>
        )}{' '}
        · version <span className="num">{run.version}</span>
        {run.upload_id && ' · made from an upload in the browser'}
      </p>
      <nav aria-label="This run" className="flex flex-wrap gap-x-4 gap-y-1 text-sm">
        <a href={exportUrl('json')} download className={LINK}>
          Download JSON
        </a>
        <a href={exportUrl('csv')} download className={LINK}>
          Download CSV
        </a>
        <Link to={`/compare?a=${encodeURIComponent(run.id)}`} className={LINK}>
          Compare with…
        </Link>
        {run.pulsar && (
          <Link to={`/pulsars/${encodeURIComponent(run.pulsar)}`} className={LINK}>
            {run.pulsar}&rsquo;s page
          </Link>
        )}
      </nav>
    </header>
  );
}
