import { Link } from 'react-router';
import type { RunSummaryView } from '../api/types';
import { dateTime, KIND_LABEL } from '../lib/time';
import { StateBadge } from './StateBadge';

/** A compact list of runs: pulsar, kind, state, who and when; each links to its run page. */
export function RunList({ runs }: { runs: RunSummaryView[] }) {
  return (
    <ul className="divide-y divide-rule rounded-sm border border-rule bg-panel">
      {runs.map((r) => (
        <li key={r.id} className="flex flex-wrap items-baseline gap-x-3 gap-y-1 px-3 py-2 text-sm">
          <Link
            to={`/runs/${r.id}`}
            className="font-medium text-accent underline-offset-2 hover:underline"
          >
            {r.pulsar ?? '—'} · {KIND_LABEL[r.kind] ?? r.kind}
          </Link>
          <StateBadge state={r.state} />
          {r.title && <span className="text-ink-soft">{r.title}</span>}
          <span className="ml-auto text-xs text-ink-soft">
            {r.created_by.name} · <span className="num">{dateTime(r.updated_at)}</span>
          </span>
        </li>
      ))}
    </ul>
  );
}
