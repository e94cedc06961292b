import type { Logger } from 'pino';
import type { Auth } from './auth/auth.js';
import type { Database, Db } from './db/client.js';
import type { Mailer } from './mail/mailer.js';
import type { AnalysisRunner } from './jobs/runner.js';

/** Everything a route needs, built once by createServices() and passed to createApp(). */
export interface Services {
  database: Database;
  db: Db;
  auth: Auth;
  mailer: Mailer;
  analyses: AnalysisRunner;
  logger: Logger;
  /** folder for uploads and (with PGlite) the database */
  dataDir: string;
  /** public URL, e.g. http://127.0.0.1:5180 — used in links (mail, `runs push` output) */
  publicUrl: string;
  trustedOrigins: string[];
  limits: { uploadBytes: number; jsonBytes: string; signInPerMinute: number };
}
