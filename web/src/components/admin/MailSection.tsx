import { useState } from 'react';
import { useMail, type MailView } from '../../api/admin';
import { dateTime } from '../../lib/time';
import { Empty, ErrorNotice, Loading } from '../QueryState';
import { AdminSection, buttonClass, TableHead, tableClass, td } from './AdminSection';

const FIRST = 15;

const STATUS_CLASS: Record<string, string> = {
  queued: 'text-state-in-review',
  sent: 'text-state-approved',
  failed: 'text-state-returned',
};

function Status({ m }: { m: MailView }) {
  return (
    <div>
      <span className={`font-medium ${STATUS_CLASS[m.status] ?? ''}`}>{m.status}</span>
      {m.captured && (
        <span className="ml-1 text-xs text-ink-soft" title="kept by the development catcher">
          captured
        </span>
      )}
      {m.error && <p className="mt-0.5 max-w-xs text-xs break-words text-alert">{m.error}</p>}
    </div>
  );
}

/** Outgoing notices (submitted, approved, returned…) and where they go. */
export function MailSection() {
  const q = useMail();
  const [all, setAll] = useState(false);
  const shown = all ? (q.data?.items ?? []) : (q.data?.items ?? []).slice(0, FIRST);
  return (
    <AdminSection
      id="admin-mail"
      title="Mail"
      intro={
        q.data ? (
          <>
            Notices go to: <span className="num font-medium text-ink">{q.data.target}</span>. Set{' '}
            <code className="num">SMTP_URL</code> for the server to send them through your mail
            relay; failed sends are retried up to five times.
          </>
        ) : undefined
      }
    >
      {q.isPending ? (
        <Loading what="outgoing mail" />
      ) : q.isError ? (
        <ErrorNotice error={q.error} />
      ) : q.data.items.length === 0 ? (
        <Empty>
          No notices yet. Submitting, approving or returning a run sends one to the people
          concerned.
        </Empty>
      ) : (
        <div className="overflow-x-auto">
          <table className={tableClass}>
            <TableHead
              cells={[
                'Queued',
                'To',
                'Subject and text',
                'Status',
                { label: 'Attempts', numeric: true },
                'Sent',
              ]}
            />
            <tbody>
              {shown.map((m) => (
                <tr key={m.id} className="border-b border-rule last:border-0">
                  <td className={`${td} num text-xs whitespace-nowrap`}>
                    {dateTime(m.created_at)}
                  </td>
                  <td className={td}>{m.to}</td>
                  <td className={td}>
                    <details>
                      <summary className="cursor-pointer">{m.subject}</summary>
                      <pre
                        tabIndex={0}
                        className="mt-1 max-h-64 max-w-xl overflow-auto rounded-sm border border-rule bg-paper p-2 font-sans text-xs whitespace-pre-wrap"
                      >
                        {m.body}
                      </pre>
                    </details>
                  </td>
                  <td className={td}>
                    <Status m={m} />
                  </td>
                  <td className={`${td} num text-right`}>{m.attempts}</td>
                  <td className={`${td} num text-xs whitespace-nowrap`}>{dateTime(m.sent_at)}</td>
                </tr>
              ))}
            </tbody>
          </table>
          {q.data.items.length > FIRST && (
            <button type="button" className={`${buttonClass} mt-2`} onClick={() => setAll(!all)}>
              {all ? `Show the latest ${FIRST}` : `Show all ${q.data.items.length} notices`}
            </button>
          )}
        </div>
      )}
    </AdminSection>
  );
}
