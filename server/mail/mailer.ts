// E-mail notices. A notice is queued as a row of the `mail` table in the same transaction as the
// change it announces, so no acknowledged change loses its notice; a sender then delivers queued
// rows through nodemailer (SMTP_URL, or the in-process catcher in development and tests).
import { and, eq, inArray, lt } from 'drizzle-orm';
import nodemailer from 'nodemailer';
import type { Logger } from 'pino';
import type { Db } from '../db/client.js';
import { mail } from '../db/schema.js';

export interface Notice {
  to: string;
  subject: string;
  body: string;
}

type Tx = Pick<Db, 'insert'>;

/** Queue notices inside the caller's transaction. */
export async function queueMail(tx: Tx, notices: Notice[]): Promise<void> {
  if (notices.length === 0) return;
  await tx
    .insert(mail)
    .values(notices.map((n) => ({ toAddress: n.to, subject: n.subject, body: n.body })));
}

export interface Mailer {
  /** deliver whatever is queued now (also runs on a timer); resolves when this pass is done */
  flush(): Promise<void>;
  close(): Promise<void>;
  /** where mail goes, for the log: an SMTP URL without password, or "catcher" */
  target: string;
}

const MAX_ATTEMPTS = 5;

export function createMailer(o: {
  db: Db;
  smtpUrl: string;
  from: string;
  logger: Logger;
  target: string;
  intervalMs?: number;
}): Mailer {
  const transport = nodemailer.createTransport(o.smtpUrl);
  let running: Promise<void> | undefined;
  let again = false;

  async function pass(): Promise<void> {
    const queued = await o.db
      .select()
      .from(mail)
      .where(and(inArray(mail.status, ['queued']), lt(mail.attempts, MAX_ATTEMPTS)))
      .orderBy(mail.createdAt)
      .limit(50);
    for (const m of queued) {
      const messageId = `<${m.id}@sightline.invalid>`;
      try {
        await transport.sendMail({
          from: o.from,
          to: m.toAddress,
          subject: m.subject,
          text: m.body,
          messageId,
        });
        await o.db
          .update(mail)
          .set({ status: 'sent', sentAt: new Date(), messageId, attempts: m.attempts + 1 })
          .where(eq(mail.id, m.id));
      } catch (err) {
        const attempts = m.attempts + 1;
        o.logger.warn({ err, mailId: m.id, attempts }, 'mail delivery failed');
        await o.db
          .update(mail)
          .set({
            attempts,
            error: String((err as Error).message ?? err),
            status: attempts >= MAX_ATTEMPTS ? 'failed' : 'queued',
          })
          .where(eq(mail.id, m.id));
      }
    }
  }

  function flush(): Promise<void> {
    if (running) {
      again = true;
      return running;
    }
    running = (async () => {
      try {
        do {
          again = false;
          await pass();
        } while (again);
      } catch (err) {
        o.logger.error({ err }, 'mail sender stopped on an error');
      } finally {
        running = undefined;
      }
    })();
    return running;
  }

  const timer = setInterval(() => void flush(), o.intervalMs ?? 30_000);
  timer.unref();

  return {
    flush,
    target: o.target,
    async close() {
      clearInterval(timer);
      await running;
      transport.close();
    },
  };
}
