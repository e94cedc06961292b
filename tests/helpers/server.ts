// A real review server for API tests: temporary data directory, embedded PostgreSQL (PGlite) or,
// when SIGHTLINE_TEST_DATABASE_URL is set (CI starts Debian's postgresql), a fresh database on
// that server; the five demo roles signed in; robots' tokens made through the API.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { pino } from 'pino';
import request from 'supertest';
import { startServer, type RunningServer } from '../../server/start.js';
import { tempDir } from './cli.js';
import { freshPgDatabase } from './pg.js';

export type Engine = 'pglite' | 'postgres';
export const ROLES = ['viewer', 'analyst', 'lead', 'admin'] as const;
export type TestRole = (typeof ROLES)[number];

/** The engines the API suite runs on here: always PGlite; PostgreSQL when CI provides one. */
export const ENGINES: Engine[] = process.env.SIGHTLINE_TEST_DATABASE_URL
  ? ['pglite', 'postgres']
  : ['pglite'];

if (process.env.CI && !process.env.SIGHTLINE_TEST_DATABASE_URL)
  throw new Error('CI must provide SIGHTLINE_TEST_DATABASE_URL (.ci/run starts PostgreSQL)');

export const PASSWORD = 'correct horse battery staple';

export interface Person {
  id: string;
  email: string;
  role: TestRole;
  /** "sightline.session_token=…" */
  cookie: string;
}

export interface TestServer {
  engine: Engine;
  url: string;
  running: RunningServer;
  dataDir: string;
  /** the PostgreSQL database's URL (engine 'postgres' only) */
  databaseUrl?: string;
  people: Record<string, Person>;
  /** an HTTP client bound to the app (supertest) */
  http: ReturnType<typeof request>;
  close(): Promise<void>;
}

async function signIn(url: string, email: string): Promise<string> {
  const r = await fetch(`${url}/api/auth/sign-in/email`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', origin: url },
    body: JSON.stringify({ email, password: PASSWORD }),
  });
  if (r.status !== 200)
    throw new Error(`sign-in of ${email} failed: ${r.status} ${await r.text()}`);
  const set = r.headers.getSetCookie().find((c) => c.startsWith('sightline.session_token='));
  if (!set) throw new Error('no session cookie');
  return set.split(';')[0];
}

/** people: name → role; e.g. { ana: 'analyst', lead: 'lead' } */
export async function startTestServer(
  engine: Engine,
  people: Record<string, TestRole> = {
    guest: 'viewer',
    ana: 'analyst',
    ben: 'analyst',
    lead: 'lead',
    lead2: 'lead',
    admin: 'admin',
  },
  options: { signInPerMinute?: number; uploadBytes?: number; inProcessWorker?: boolean } = {},
): Promise<TestServer> {
  const { dir, cleanup } = tempDir('sightline-api-');
  const webDir = join(dir, 'web');
  mkdirSync(join(webDir, 'assets'), { recursive: true });
  writeFileSync(join(webDir, 'index.html'), '<!doctype html><title>Sightline</title>');
  const pg = engine === 'postgres' ? await freshPgDatabase() : undefined;
  const running = await startServer({
    port: 0,
    host: '127.0.0.1',
    dataDir: join(dir, 'data'),
    databaseUrl: pg?.url,
    webDir,
    logger: pino({ level: process.env.TEST_LOG_LEVEL ?? 'silent' }),
    authSecret: 'test-secret-test-secret-test-secret-0123',
    signInPerMinute: options.signInPerMinute ?? 1000,
    uploadBytes: options.uploadBytes,
    analysisThreads: 2,
    inProcessWorker: options.inProcessWorker,
  });
  const s = running.services;
  const out: Record<string, Person> = {};
  for (const [name, role] of Object.entries(people)) {
    const email = `${name}@saltbush.test`;
    const made = await s.auth.api.createUser({
      body: {
        email,
        password: PASSWORD,
        name: name[0].toUpperCase() + name.slice(1),
        role: role as 'admin',
      },
    });
    out[name] = { id: made.user.id, email, role, cookie: await signIn(running.url, email) };
  }
  return {
    engine,
    url: running.url,
    running,
    dataDir: join(dir, 'data'),
    databaseUrl: pg?.url,
    people: out,
    http: request(running.url),
    async close() {
      await running.close();
      await pg?.drop();
      cleanup();
    },
  };
}
