import { useQueryClient } from '@tanstack/react-query';
import { useId, useRef, useState } from 'react';
import { ApiError } from '../../api/client';
import { useReviewRun, useSubmitRun } from '../../api/runs';
import type { Me, RunDetail } from '../../api/types';
import { ErrorNotice } from '../QueryState';
import { reviewActions } from './review-actions';

type Decision = 'approve' | 'return' | 'comment';

const DONE: Record<Decision | 'submit', string> = {
  submit: 'Submitted for review: the leads have been told.',
  approve: 'Approved.',
  return: 'Returned to its creator with your comment.',
  comment: 'Comment added.',
};

const BUTTON =
  'rounded-sm border px-3 py-1.5 text-sm font-medium disabled:cursor-not-allowed disabled:opacity-60';
const PRIMARY = `${BUTTON} border-accent bg-accent text-panel hover:bg-ink hover:border-ink`;
const SECONDARY = `${BUTTON} border-edge bg-panel text-ink hover:border-ink`;
const DANGER = `${BUTTON} border-alert bg-panel text-alert hover:bg-paper`;

/**
 * Review actions on one run: submit (its creator), approve or return (a lead who did not create
 * it, while it is in review, with the version they looked at), and comments. Buttons appear only
 * when the role and state allow them (reviewActions); otherwise a sentence says why.
 */
export function ReviewPanel({ run, me }: { run: RunDetail; me: Me | null | undefined }) {
  const actions = reviewActions(me, run);
  const submit = useSubmitRun(run.id);
  const review = useReviewRun(run.id);
  const qc = useQueryClient();
  const [comment, setComment] = useState('');
  const [problem, setProblem] = useState<string | null>(null);
  const [error, setError] = useState<unknown>(null);
  const [done, setDone] = useState<string | null>(null);
  const textarea = useRef<HTMLTextAreaElement>(null);
  const ids = { comment: useId(), problem: useId(), hint: useId() };
  const busy = submit.isPending || review.isPending;
  const anyButton = actions.submit || actions.approve || actions.return || actions.comment;

  const start = () => {
    setProblem(null);
    setError(null);
    setDone(null);
  };
  const needComment = (message: string) => {
    setProblem(message);
    textarea.current?.focus();
  };

  async function onSubmit() {
    start();
    try {
      await submit.mutateAsync(run.version);
      setDone(DONE.submit);
    } catch (e) {
      setError(e);
      // whatever changed on the server, show the run as it now is
      await qc.invalidateQueries({ queryKey: ['run', run.id] });
    }
  }

  async function onReview(decision: Decision) {
    start();
    const text = comment.trim();
    if (decision === 'return' && !text)
      return needComment('Returning a run needs a comment: say what needs to change.');
    if (decision === 'comment' && !text) return needComment('Write a comment first.');
    try {
      await review.mutateAsync({
        decision,
        comment: text,
        ...(decision === 'comment' ? {} : { version: run.version }),
      });
      setComment('');
      setDone(DONE[decision]);
    } catch (e) {
      setError(e); // the hook reloads the run whatever the answer
    }
  }

  const stale = error instanceof ApiError && error.status === 409;

  return (
    <section aria-labelledby="review-heading" className="flex flex-col gap-3">
      <h2
        id="review-heading"
        className="text-sm font-semibold tracking-wide text-ink-soft uppercase"
      >
        Review
      </h2>
      {actions.comment && (
        <div className="flex flex-col gap-1">
          <label htmlFor={ids.comment} className="text-sm font-medium">
            Comment
          </label>
          <textarea
            id={ids.comment}
            ref={textarea}
            value={comment}
            rows={4}
            onChange={(e) => {
              setComment(e.target.value);
              if (problem && e.target.value.trim()) setProblem(null);
            }}
            aria-invalid={problem ? true : undefined}
            aria-describedby={problem ? `${ids.problem} ${ids.hint}` : ids.hint}
            className="rounded-sm border border-edge bg-panel px-2 py-1.5 text-sm"
          />
          <p id={ids.hint} className="text-xs text-ink-soft">
            {actions.return
              ? 'Optional when approving; required when returning.'
              : 'Everyone who can read this run sees your comment.'}
          </p>
          {problem && (
            <p id={ids.problem} className="text-sm text-alert">
              {problem}
            </p>
          )}
        </div>
      )}
      {anyButton && (
        <div className="flex flex-wrap gap-2">
          {actions.submit && (
            <button type="button" className={PRIMARY} disabled={busy} onClick={onSubmit}>
              Submit for review
            </button>
          )}
          {actions.approve && (
            <button
              type="button"
              className={PRIMARY}
              disabled={busy}
              onClick={() => onReview('approve')}
            >
              Approve
            </button>
          )}
          {actions.return && (
            <button
              type="button"
              className={DANGER}
              disabled={busy}
              onClick={() => onReview('return')}
            >
              Return
            </button>
          )}
          {actions.comment && (
            <button
              type="button"
              className={SECONDARY}
              disabled={busy}
              onClick={() => onReview('comment')}
            >
              Add comment
            </button>
          )}
        </div>
      )}
      {(actions.approve || actions.return) && (
        <p className="text-xs text-ink-soft">
          You are reviewing version <span className="num">{run.version}</span>; if it changes before
          you decide, the server refuses and this page reloads it.
        </p>
      )}
      {actions.notes.map((n) => (
        <p key={n} className="text-sm text-ink-soft">
          {n}
        </p>
      ))}
      <div role="status" className="text-sm text-state-approved empty:hidden">
        {busy ? <span className="text-ink-soft">Sending…</span> : done}
      </div>
      {error !== null && (
        <ErrorNotice
          error={error}
          action={
            stale ? (
              <p className="mt-1 text-ink-soft">
                The run has been reloaded: look at what changed, then decide again.
              </p>
            ) : undefined
          }
        />
      )}
    </section>
  );
}
