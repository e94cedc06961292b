import type { AnalysisJobView, JobState } from '../../api/uploads';
import { dateTime } from '../../lib/time';
import { ErrorNotice } from '../QueryState';

const STEPS: JobState[] = ['queued', 'running', 'done'];

const SENTENCE: Record<JobState, string> = {
  queued: 'Analysis queued: waiting for a worker…',
  running: 'Analysis running on the server…',
  done: 'Analysis done: opening the new run…',
  failed: 'Analysis failed.',
};

interface JobStatusProps {
  /** the job, once the server has answered */
  job: AnalysisJobView | undefined;
  /** what is happening before there is a job: uploading or sending the request */
  before?: string;
  /** polling trouble (the job itself goes on on the server) */
  pollError?: unknown;
}

/** queued → running → done / failed, announced politely (role="status"). */
export function JobStatus({ job, before, pollError }: JobStatusProps) {
  const state = job?.state;
  // a failed job ends where "done" would have been
  const steps: JobState[] = state === 'failed' ? ['queued', 'running', 'failed'] : STEPS;
  const reached = (s: JobState) => !!state && steps.indexOf(s) <= steps.indexOf(state);
  return (
    <div className="flex flex-col gap-2">
      <div role="status" className="flex flex-col gap-2 text-sm">
        {(job || before) && (
          <>
            <ol className="flex flex-wrap items-center gap-2" aria-label="Job progress">
              {steps.map((s, i) => (
                <li key={s} className="flex items-center gap-2">
                  {i > 0 && (
                    <span aria-hidden className="text-ink-soft">
                      →
                    </span>
                  )}
                  <span
                    className={`rounded-sm border px-1.5 py-px text-xs font-medium ${
                      s === 'failed'
                        ? 'border-alert bg-alert text-panel'
                        : state === s
                          ? 'border-accent bg-accent text-panel'
                          : reached(s)
                            ? 'border-accent text-accent'
                            : 'border-edge text-ink-soft'
                    }`}
                    aria-current={state === s ? 'step' : undefined}
                  >
                    {s}
                  </span>
                </li>
              ))}
            </ol>
            <p>{state ? SENTENCE[state] : before}</p>
          </>
        )}
      </div>
      {job?.state === 'failed' && <FailureReport job={job} />}
      {pollError !== undefined && pollError !== null && job?.state !== 'failed' && (
        <ErrorNotice error={pollError} />
      )}
    </div>
  );
}

function FailureReport({ job }: { job: AnalysisJobView }) {
  const e = job.error;
  const d = e?.details;
  const rows: [string, string | number | undefined][] = [
    ['File', d?.file],
    ['Row', d?.row],
    ['Line', d?.line],
    ['Column', d?.column],
    ['Reason', d?.reason],
  ];
  const shown = rows.filter(([, v]) => v !== undefined && v !== '');
  return (
    <div role="alert" className="rounded-sm border border-alert bg-panel px-3 py-2 text-sm">
      <p className="font-medium text-alert">
        {e?.message ?? 'The analysis stopped without a message.'}
      </p>
      {shown.length > 0 && (
        <dl className="mt-2 grid grid-cols-[max-content_1fr] gap-x-4 gap-y-0.5">
          {shown.map(([k, v]) => (
            <div key={k} className="contents">
              <dt className="text-ink-soft">{k}</dt>
              <dd className={typeof v === 'number' || k === 'Column' ? 'num' : ''}>{v}</dd>
            </div>
          ))}
        </dl>
      )}
      <p className="mt-2 text-xs text-ink-soft">
        {e?.code === 'invalid_input'
          ? 'Fix the file (or the options) and run again.'
          : 'This looks like a problem on the server; tell your admin.'}{' '}
        Finished <span className="num">{dateTime(job.finished_at)}</span>.
      </p>
    </div>
  );
}
