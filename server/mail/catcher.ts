// Development and test SMTP server (smtp-server): accepts every message on loopback and stores
// what it received beside the queued row, so admins can read the notices in the app.
import { eq } from 'drizzle-orm';
import { SMTPServer } from 'smtp-server';
import type { Logger } from 'pino';
import type { Db } from '../db/client.js';
import { mail } from '../db/schema.js';

export interface MailCatcher {
  url: string;
  close(): Promise<void>;
}

const MAX_MESSAGE_BYTES = 1 << 20;

export async function startMailCatcher(db: Db, logger: Logger): Promise<MailCatcher> {
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS', 'AUTH'],
    size: MAX_MESSAGE_BYTES,
    logger: false,
    onData(stream, _session, callback) {
      const chunks: Buffer[] = [];
      stream.on('data', (c: Buffer) => chunks.push(c));
      stream.on('end', () => {
        const raw = Buffer.concat(chunks).toString('utf8');
        const id = /^Message-ID:\s*<([0-9a-f-]{36})@sightline\.invalid>/im.exec(raw)?.[1];
        if (!id) {
          callback();
          return;
        }
        db.update(mail)
          .set({ captured: raw })
          .where(eq(mail.id, id))
          .then(
            () => callback(),
            (err: Error) => {
              logger.error({ err }, 'mail catcher could not store a message');
              callback(err);
            },
          );
      });
    },
  });
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(0, '127.0.0.1', () => resolve());
  });
  const address = server.server.address();
  const port = typeof address === 'object' && address ? address.port : 0;
  return {
    url: `smtp://127.0.0.1:${port}`,
    close: () => new Promise<void>((resolve) => server.close(() => resolve())),
  };
}
