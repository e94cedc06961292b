import type { ReviewView } from '../../api/types';
import { dateTime } from '../../lib/time';
import { Empty } from '../QueryState';

const DECISION: Record<ReviewView['decision'], { label: string; style: string }> = {
  approve: { label: 'approved', style: 'border-state-approved text-state-approved' },
  return: { label: 'returned', style: 'border-state-returned text-state-returned' },
  comment: { label: 'comment', style: 'border-state-draft text-state-draft' },
};

/** Every review of a run, oldest first: decision, reviewer, run version, time and comment. */
export function ReviewHistory({ reviews }: { reviews: ReviewView[] }) {
  return (
    <section aria-labelledby="review-history-heading" className="flex flex-col gap-2">
      <h2
        id="review-history-heading"
        className="text-sm font-semibold tracking-wide text-ink-soft uppercase"
      >
        Review history
      </h2>
      {reviews.length === 0 ? (
        <Empty>
          No reviews yet. Comments, and a lead&rsquo;s approval or return, appear here once the run
          is submitted for review.
        </Empty>
      ) : (
        <ol className="flex flex-col divide-y divide-rule rounded-sm border border-rule bg-panel">
          {reviews.map((r) => (
            <li key={r.id} className="flex flex-col gap-1 px-3 py-2 text-sm">
              <div className="flex flex-wrap items-baseline gap-x-2 gap-y-0.5">
                <span
                  className={`rounded-sm border px-1.5 py-px text-xs font-medium ${DECISION[r.decision].style}`}
                >
                  {DECISION[r.decision].label}
                </span>
                <span className="font-medium" title={r.reviewer.email}>
                  {r.reviewer.name}
                </span>
                <span className="text-xs text-ink-soft">
                  on version <span className="num">{r.run_version}</span>
                </span>
                <time dateTime={r.created_at} className="num ml-auto text-xs text-ink-soft">
                  {dateTime(r.created_at)}
                </time>
              </div>
              {r.comment ? (
                <p className="whitespace-pre-wrap">{r.comment}</p>
              ) : (
                <p className="text-xs text-ink-soft">no comment</p>
              )}
            </li>
          ))}
        </ol>
      )}
    </section>
  );
}
