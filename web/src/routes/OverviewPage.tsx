import { useId, type ReactNode } from 'react';
import { Link } from 'react-router';
import { useActivity } from '../api/activity';
import { useBaselines, useRuns } from '../api/runs';
import { canContribute, canReview, useSession } from '../api/session';
import type { Me } from '../api/types';
import { Empty, ErrorNotice, Loading, PageTitle } from '../components/QueryState';
import { RunList } from '../components/RunList';
import { dateTime, KIND_LABEL } from '../lib/time';

function Section({ title, children }: { title: string; children: ReactNode }) {
  // an id without spaces: aria-labelledby takes a list of ids, so "Waiting for your review"
  // would name nothing and the section would not be a named region
  const id = useId();
  return (
    <section aria-labelledby={id} className="flex flex-col gap-2">
      <h2 id={id} className="text-sm font-semibold tracking-wide text-ink-soft uppercase">
        {title}
      </h2>
      {children}
    </section>
  );
}

function ReviewQueue({ me }: { me: Me }) {
  const q = useRuns({ state: 'in_review', page_size: 50 });
  if (q.isPending) return <Loading what="the review queue" />;
  if (q.isError) return <ErrorNotice error={q.error} />;
  const mine = q.data.items.filter((r) => r.created_by.id !== me.id);
  if (!mine.length)
    return (
      <Empty>Nothing waits for your review. Submitted runs of your colleagues appear here.</Empty>
    );
  return <RunList runs={mine} />;
}

function MyRuns({ state, empty }: { state: string; empty: ReactNode }) {
  const q = useRuns({ state, creator: 'me', page_size: 20 });
  if (q.isPending) return <Loading what="your runs" />;
  if (q.isError) return <ErrorNotice error={q.error} />;
  if (!q.data.items.length) return <Empty>{empty}</Empty>;
  return <RunList runs={q.data.items} />;
}

function BaselineHealth() {
  const q = useBaselines();
  if (q.isPending) return <Loading what="baselines" />;
  if (q.isError) return <ErrorNotice error={q.error} />;
  if (!q.data.items.length)
    return (
      <Empty>
        No reference pulsar has an approved baseline yet. Approving a run of a reference pulsar
        makes it the baseline; CI then checks fresh fits against it with{' '}
        <code className="num">sightline baseline check</code>.
      </Empty>
    );
  return (
    <table className="w-full border-collapse rounded-sm border border-rule bg-panel text-sm">
      <thead>
        <tr className="border-b border-rule text-left text-xs text-ink-soft">
          <th scope="col" className="px-3 py-1.5 font-medium">
            Pulsar
          </th>
          <th scope="col" className="px-3 py-1.5 font-medium">
            Kind
          </th>
          <th scope="col" className="px-3 py-1.5 font-medium">
            Last check
          </th>
          <th scope="col" className="px-3 py-1.5 text-right font-medium">
            Worst |dev| (σ)
          </th>
          <th scope="col" className="px-3 py-1.5 font-medium">
            Checked
          </th>
        </tr>
      </thead>
      <tbody>
        {q.data.items.map((b) => (
          <tr key={b.id} className="border-b border-rule last:border-0">
            <td className="px-3 py-1.5">
              <Link to={`/runs/${b.run_id}`} className="text-accent hover:underline">
                {b.pulsar}
              </Link>
            </td>
            <td className="px-3 py-1.5">{KIND_LABEL[b.kind] ?? b.kind}</td>
            <td className="px-3 py-1.5">
              {b.last_check ? (
                <span
                  className={
                    b.last_check.status === 'fail'
                      ? 'font-medium text-state-returned'
                      : 'font-medium text-state-approved'
                  }
                >
                  {b.last_check.status === 'fail'
                    ? `fail (${b.last_check.n_failed})`
                    : b.last_check.status}
                </span>
              ) : (
                <span className="text-ink-soft">never checked</span>
              )}
            </td>
            <td className="num px-3 py-1.5 text-right">
              {b.last_check?.worst_deviation_sigma?.toFixed(2) ?? '—'}
            </td>
            <td className="num px-3 py-1.5 text-xs text-ink-soft">
              {dateTime(b.last_check?.checked_at)}
            </td>
          </tr>
        ))}
      </tbody>
    </table>
  );
}

const VERB: Record<string, string> = {
  'run.create': 'created',
  'run.submit': 'submitted',
  'run.approve': 'approved',
  'run.return': 'returned',
  'run.comment': 'commented on',
  'run.supersede': 'superseded',
  'baseline.set': 'set the baseline of',
};

function Activity() {
  const q = useActivity(15);
  if (q.isPending) return <Loading what="recent activity" />;
  if (q.isError) return <ErrorNotice error={q.error} />;
  if (!q.data.items.length)
    return (
      <Empty>
        No activity yet. Push a result with <code className="num">sightline runs push</code>.
      </Empty>
    );
  return (
    <ol className="flex flex-col gap-1 text-sm">
      {q.data.items.map((a) => (
        <li key={a.id} className="flex flex-wrap gap-x-2">
          <span className="num text-xs text-ink-soft">{dateTime(a.created_at)}</span>
          <span>{a.actor ?? 'someone'}</span>
          <span className="text-ink-soft">{VERB[a.action] ?? a.action}</span>
          {a.run_id ? (
            <Link to={`/runs/${a.run_id}`} className="text-accent hover:underline">
              {a.pulsar ?? 'a run'} {a.kind ? (KIND_LABEL[a.kind] ?? a.kind) : ''}
            </Link>
          ) : (
            <span>
              {a.pulsar} {a.kind}
            </span>
          )}
        </li>
      ))}
    </ol>
  );
}

export function OverviewPage() {
  const { data: me } = useSession();
  if (!me) return null;
  return (
    <>
      <PageTitle>Overview</PageTitle>
      <div className="grid gap-8 lg:grid-cols-2">
        <div className="flex flex-col gap-8">
          {canReview(me) && (
            <Section title="Waiting for your review">
              <ReviewQueue me={me} />
            </Section>
          )}
          {canContribute(me) && (
            <Section title="Returned to you">
              <MyRuns state="returned" empty="None of your runs was returned. Well done." />
            </Section>
          )}
          {canContribute(me) && (
            <Section title="Your drafts">
              <MyRuns
                state="draft"
                empty={
                  <>
                    No drafts. Push results with <code className="num">sightline runs push</code> or
                    start a{' '}
                    <Link to="/analyses/new" className="text-accent underline">
                      new analysis
                    </Link>
                    .
                  </>
                }
              />
            </Section>
          )}
          <Section title="Reference pulsars">
            <BaselineHealth />
          </Section>
        </div>
        <Section title="Recent activity">
          <Activity />
        </Section>
      </div>
    </>
  );
}
