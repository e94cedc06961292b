import { useId, type ReactNode } from 'react';
import { Link, useParams } from 'react-router';
import { useBaselines, usePulsars, useRuns } from '../api/runs';
import type { BaselineView } from '../api/types';
import { DmHistory } from '../components/browse/DmHistory';
import { Position } from '../components/browse/Position';
import { Empty, ErrorNotice, Loading, PageTitle } from '../components/QueryState';
import { RunList } from '../components/RunList';
import { StateBadge } from '../components/StateBadge';
import { fixed } from '../lib/format';
import { dateTime, KIND_LABEL } from '../lib/time';

const RUNS_SHOWN = 50;

function Section({
  title,
  children,
  aside,
}: {
  title: string;
  children: ReactNode;
  aside?: ReactNode;
}) {
  const id = useId();
  return (
    <section aria-labelledby={id} className="flex flex-col gap-3">
      <div className="flex flex-wrap items-baseline justify-between gap-3">
        <h2 id={id} className="text-base font-semibold tracking-tight">
          {title}
        </h2>
        {aside}
      </div>
      {children}
    </section>
  );
}

function Detail({ term, children }: { term: string; children: ReactNode }) {
  return (
    <div className="flex flex-col">
      <dt className="text-xs text-ink-soft">{term}</dt>
      <dd className="text-sm">{children}</dd>
    </div>
  );
}

function LastCheck({ b }: { b: BaselineView }) {
  const c = b.last_check;
  if (!c) return <span className="text-ink-soft">never checked</span>;
  const fail = c.status === 'fail';
  return (
    <span>
      <span className={`font-medium ${fail ? 'text-state-returned' : 'text-state-approved'}`}>
        {fail ? `fail (${c.n_failed})` : c.status === 'pass' ? 'pass' : 'no baseline'}
      </span>{' '}
      <span className="num text-xs text-ink-soft">
        worst {c.worst_deviation_sigma === null ? '—' : `${fixed(c.worst_deviation_sigma, 2)}σ`} /
        tol. {fixed(c.tolerance_sigma, 1)}σ · {dateTime(c.checked_at)}
      </span>
    </span>
  );
}

function Baselines({
  pulsar,
  items,
  isReference,
}: {
  pulsar: string;
  items: BaselineView[];
  isReference: boolean;
}) {
  const mine = items
    .filter((b) => b.pulsar === pulsar)
    .sort((x, y) => (x.state === y.state ? y.id - x.id : x.state === 'active' ? -1 : 1));
  if (!mine.length)
    return (
      <Empty>
        {isReference
          ? `${pulsar} is a reference pulsar without an approved baseline yet: approving one of its runs makes it the baseline for that kind.`
          : `${pulsar} is not a reference pulsar, so it has no baselines. A lead can mark it as one; its next approved run then becomes the baseline.`}
      </Empty>
    );
  return (
    <div className="overflow-x-auto rounded-sm border border-rule bg-panel">
      <table className="w-full border-collapse text-sm">
        <thead>
          <tr className="border-b border-rule text-left text-xs text-ink-soft">
            <th scope="col" className="px-3 py-1.5 font-medium">
              Kind
            </th>
            <th scope="col" className="px-3 py-1.5 font-medium">
              Baseline
            </th>
            <th scope="col" className="px-3 py-1.5 font-medium">
              Run state
            </th>
            <th scope="col" className="px-3 py-1.5 font-medium">
              Set by
            </th>
            <th scope="col" className="px-3 py-1.5 font-medium">
              Set
            </th>
            <th scope="col" className="px-3 py-1.5 font-medium">
              Last check
            </th>
          </tr>
        </thead>
        <tbody>
          {mine.map((b) => (
            <tr key={b.id} className="border-b border-rule align-baseline last:border-0">
              <td className="px-3 py-1.5">
                <Link
                  to={`/runs/${b.run_id}`}
                  className="text-accent underline-offset-2 hover:underline"
                >
                  {KIND_LABEL[b.kind] ?? b.kind}
                </Link>
              </td>
              <td className="px-3 py-1.5">
                {b.state === 'active' ? (
                  <span className="font-medium">active</span>
                ) : (
                  <span className="text-ink-soft">
                    superseded <span className="num text-xs">{dateTime(b.superseded_at)}</span>
                  </span>
                )}
              </td>
              <td className="px-3 py-1.5">
                <StateBadge state={b.run_state} />
              </td>
              <td className="px-3 py-1.5">{b.set_by}</td>
              <td className="num px-3 py-1.5 text-xs">{dateTime(b.set_at)}</td>
              <td className="px-3 py-1.5">
                {b.state === 'active' ? (
                  <LastCheck b={b} />
                ) : (
                  <span className="text-ink-soft">—</span>
                )}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  );
}

function PulsarRuns({ pulsar }: { pulsar: string }) {
  const q = useRuns({ pulsar, page_size: RUNS_SHOWN });
  if (q.isPending) return <Loading what="runs" />;
  if (q.isError) return <ErrorNotice error={q.error} />;
  if (!q.data.items.length)
    return (
      <Empty>
        No runs of {pulsar} yet. Push results with <code className="num">sightline runs push</code>{' '}
        or start a{' '}
        <Link to="/analyses/new" className="text-accent underline underline-offset-2">
          new analysis
        </Link>
        .
      </Empty>
    );
  return (
    <>
      <RunList runs={q.data.items} />
      {q.data.total > q.data.items.length && (
        <p className="text-xs text-ink-soft">
          The newest {q.data.items.length} of {q.data.total}.{' '}
          <Link to={`/runs?pulsar=${encodeURIComponent(pulsar)}`} className="text-accent underline">
            All runs of {pulsar}
          </Link>
        </p>
      )}
    </>
  );
}

export function PulsarPage() {
  const { name = '' } = useParams();
  const pulsars = usePulsars();
  const baselines = useBaselines(true);
  if (pulsars.isPending) return <Loading what={name} />;
  if (pulsars.isError) return <ErrorNotice error={pulsars.error} />;
  const p = pulsars.data.items.find((x) => x.name === name);
  if (!p)
    return (
      <>
        <PageTitle>{name}</PageTitle>
        <Empty>
          No pulsar named “{name}” is in the catalogue. Check the name on the{' '}
          <Link to="/pulsars" className="text-accent underline underline-offset-2">
            pulsars list
          </Link>
          ; pushing a run of a new pulsar adds it.
        </Empty>
      </>
    );
  const q = encodeURIComponent(p.name);
  return (
    <>
      <PageTitle
        aside={
          <span className="flex gap-4 text-sm">
            <Link to={`/runs?pulsar=${q}`} className="text-accent underline underline-offset-2">
              Runs of {p.name}
            </Link>
            <Link to={`/compare?pulsar=${q}`} className="text-accent underline underline-offset-2">
              Compare runs
            </Link>
          </span>
        }
      >
        {p.name}
      </PageTitle>
      <div className="flex flex-col gap-8">
        <dl className="flex flex-wrap gap-x-10 gap-y-3 rounded-sm border border-rule bg-panel px-4 py-3">
          <Detail term="Period (ms)">
            <span className="num">{p.period_s === null ? '—' : fixed(p.period_s * 1e3, 3)}</span>
          </Detail>
          <Detail term="Reference DM (pc cm⁻³)">
            <span className="num">{p.dm_ref === null ? '—' : fixed(p.dm_ref, 3)}</span>
          </Detail>
          <Detail term="Position (RA, Dec)">
            <Position ra={p.ra_deg} dec={p.dec_deg} />
          </Detail>
          <Detail term="Reference pulsar">
            {p.is_reference ? 'yes — checked against its baselines' : 'no'}
          </Detail>
          {p.notes && <Detail term="Notes">{p.notes}</Detail>}
        </dl>
        <Section title="DM history">
          {baselines.isPending ? (
            <Loading what="baselines" />
          ) : (
            <DmHistory pulsar={p.name} baselines={baselines.data?.items ?? []} />
          )}
        </Section>
        <Section title="Baselines">
          {baselines.isPending ? (
            <Loading what="baselines" />
          ) : baselines.isError ? (
            <ErrorNotice error={baselines.error} />
          ) : (
            <Baselines pulsar={p.name} items={baselines.data.items} isReference={p.is_reference} />
          )}
        </Section>
        <Section title="Runs">
          <PulsarRuns pulsar={p.name} />
        </Section>
      </div>
    </>
  );
}
