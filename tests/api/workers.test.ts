// Server-side analyses taken from the PostgreSQL job queue by `sightline worker` processes
// (interfaces.md: `sightline worker`; issue: "two worker processes against Debian's PostgreSQL,
// jobs split between them, none run twice"). The server here runs no worker of its own, so every
// analysis is run by one of two real worker processes started from the built CLI. Each analysis
// row records how many times a worker took it up and which worker that was; each analysis makes
// exactly one draft run. The exactly-once hand-out itself is the queue package's (pg-boss fetches
// with FOR UPDATE SKIP LOCKED); the test checks its outcome, not its mechanism.
import { spawn, type ChildProcess } from 'node:child_process';
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { jobs } from '../../server/db/schema.js';
import { ANALYSIS_QUEUE } from '../../server/jobs/queue.js';
import { BIN, sightline } from '../helpers/cli.js';
import { residualCsv } from '../helpers/residual-csv.js';
import { startTestServer, type TestServer } from '../helpers/server.js';

const HAVE_PG = Boolean(process.env.SIGHTLINE_TEST_DATABASE_URL);
const JOBS = 24;

interface WorkerProcess {
  name: string;
  child: ChildProcess;
  stderr: string[];
  exit: Promise<number | null>;
}

function startWorker(name: string, databaseUrl: string, dataDir: string): WorkerProcess {
  const child = spawn(process.execPath, [BIN, 'worker', '--threads', '1', '--name', name], {
    env: { ...process.env, DATABASE_URL: databaseUrl, SIGHTLINE_DATA_DIR: dataDir },
    stdio: ['ignore', 'ignore', 'pipe'],
  });
  const stderr: string[] = [];
  child.stderr!.setEncoding('utf8').on('data', (d: string) => stderr.push(d));
  const exit = new Promise<number | null>((resolve) => child.on('exit', (code) => resolve(code)));
  return { name, child, stderr, exit };
}

/** Wait until every worker has logged that it takes analyses (or one has died). */
async function ready(workers: WorkerProcess[]): Promise<void> {
  const end = Date.now() + 30_000;
  for (const w of workers) {
    while (!w.stderr.join('').includes('taking analyses from the queue')) {
      if (w.child.exitCode !== null)
        throw new Error(`worker ${w.name} exited ${w.child.exitCode}: ${w.stderr.join('')}`);
      if (Date.now() > end) throw new Error(`worker ${w.name} never started: ${w.stderr.join('')}`);
      await new Promise((r) => setTimeout(r, 100));
    }
  }
}

describe('sightline worker without a PostgreSQL server', () => {
  it('refuses to start on the embedded database (exit 2, says why)', () => {
    const r = sightline(['worker'], { env: { DATABASE_URL: '' } });
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/needs DATABASE_URL/);
    expect(r.stderr).toMatch(/embedded database belongs to the server process/);
  });
});

describe('the embedded server after a crash', () => {
  let t: TestServer;
  beforeAll(async () => {
    t = await startTestServer('pglite', { ana: 'analyst' });
  }, 60_000);
  afterAll(async () => t?.close());

  it('hands an analysis its dead process left running straight back to its worker', async () => {
    const as = { Cookie: t.people.ana.cookie, Origin: t.url };
    const up = await t.http.post('/api/uploads').set(as).attach('file', residualCsv(), 'd.csv');
    expect(up.status, up.text).toBe(201);
    const s = t.running.services;
    // what a hard stop mid-analysis leaves: the row running (taken once), the queue job active
    const [row] = await s.db
      .insert(jobs)
      .values({
        kind: 'dm-fit',
        uploadId: up.body.id,
        params: {},
        createdBy: t.people.ana.id,
        state: 'running',
        attempts: 1,
        worker: 'gone:1',
        startedAt: new Date(),
      })
      .returning();
    const boss = s.analyses.queue.boss;
    // far in the future, so that this server's own worker does not take it first
    await boss.send(ANALYSIS_QUEUE, { jobId: row.id }, { id: row.id, startAfter: 3600 });
    const [taken] = await boss.fetch(ANALYSIS_QUEUE, { ignoreStartAfter: true });
    expect(taken.id).toBe(row.id);

    // what the restarted server does first (server/start.ts)
    await s.analyses.resume({ orphansAreOurs: true });
    const end = Date.now() + 30_000;
    let job;
    do {
      await new Promise((r) => setTimeout(r, 200));
      job = (await t.http.get(`/api/analyses/${row.id}`).set(as)).body;
    } while (job.state === 'running' && Date.now() < end);
    expect(job).toMatchObject({ state: 'done', attempts: 2, error: null });
    expect(job.worker).not.toBe('gone:1');
    expect(job.run_id).toMatch(/^[0-9a-f-]{36}$/);
  }, 60_000);
});

describe.skipIf(!HAVE_PG)('two sightline worker processes on one PostgreSQL queue', () => {
  let t: TestServer;
  let databaseUrl: string;
  let workers: WorkerProcess[] = [];
  const ids: string[] = [];

  beforeAll(async () => {
    t = await startTestServer(
      'postgres',
      { ana: 'analyst', guest: 'viewer' },
      {
        inProcessWorker: false,
      },
    );
    databaseUrl = t.databaseUrl!;
  }, 60_000);

  afterAll(async () => {
    for (const w of workers) if (w.child.exitCode === null) w.child.kill('SIGKILL');
    await t?.close();
  });

  it('queues analyses that no one takes while no worker runs', async () => {
    const as = { Cookie: t.people.ana.cookie, Origin: t.url };
    const up = await t.http.post('/api/uploads').set(as).attach('file', residualCsv(), 'd.csv');
    expect(up.status, up.text).toBe(201);
    for (let i = 0; i < JOBS; i++) {
      // varied options, so the drafts differ as real reruns would
      const r = await t.http
        .post('/api/analyses')
        .set(as)
        .send({ kind: 'dm-fit', upload_id: up.body.id, params: { clip_sigma: 4 + i / 10 } });
      expect(r.status, r.text).toBe(202);
      ids.push(r.body.id);
    }
    await new Promise((r) => setTimeout(r, 1500));
    const list = await t.http.get('/api/analyses').set(as);
    const ours = list.body.items.filter((j: { id: string }) => ids.includes(j.id));
    expect(ours).toHaveLength(JOBS);
    expect(ours.every((j: { state: string }) => j.state === 'queued')).toBe(true);
  });

  it('splits the jobs between two workers and runs none twice', async () => {
    workers = [
      startWorker('worker-east', databaseUrl, t.dataDir),
      startWorker('worker-west', databaseUrl, t.dataDir),
    ];
    await ready(workers);
    const as = { Cookie: t.people.guest.cookie, Origin: t.url };
    const end = Date.now() + 120_000;
    let jobs: { state: string; attempts: number; worker: string; run_id: string; error: unknown }[];
    for (;;) {
      jobs = await Promise.all(
        ids.map(async (id) => (await t.http.get(`/api/analyses/${id}`).set(as)).body),
      );
      if (jobs.every((j) => j.state === 'done' || j.state === 'failed')) break;
      if (Date.now() > end)
        throw new Error(
          `still unfinished: ${JSON.stringify(jobs.map((j) => j.state))}\n${workers.map((w) => w.stderr.join('')).join('\n')}`,
        );
      await new Promise((r) => setTimeout(r, 200));
    }
    expect(jobs.map((j) => j.error)).toEqual(jobs.map(() => null));
    expect(jobs.every((j) => j.state === 'done')).toBe(true);
    // none run twice: each taken up exactly once, and one distinct run per analysis
    expect(jobs.map((j) => j.attempts)).toEqual(jobs.map(() => 1));
    expect(new Set(jobs.map((j) => j.run_id)).size).toBe(JOBS);
    // split: both workers ran some, and nobody else ran any
    const byWorker = new Map<string, number>();
    for (const j of jobs) byWorker.set(j.worker, (byWorker.get(j.worker) ?? 0) + 1);
    expect([...byWorker.keys()].sort()).toEqual(['worker-east', 'worker-west']);

    // the database agrees: exactly JOBS analysis drafts, each pointing to its own analysis
    const db = new pg.Client({ connectionString: databaseUrl });
    await db.connect();
    try {
      const runs = await db.query(
        `SELECT count(*)::int AS n FROM runs WHERE id IN (SELECT run_id FROM jobs)`,
      );
      expect(runs.rows[0].n).toBe(JOBS);
      const drafts = await db.query(
        `SELECT count(*)::int AS n FROM runs WHERE upload_id IS NOT NULL`,
      );
      expect(drafts.rows[0].n).toBe(JOBS);
      // the queue's own record: every queue job (id = analysis id) completed, once
      const q = await db.query(
        `SELECT state, retry_count FROM pgboss.job WHERE id = ANY($1::uuid[])
         UNION ALL SELECT state, retry_count FROM pgboss.archive WHERE id = ANY($1::uuid[])`,
        [ids],
      );
      expect(q.rows).toHaveLength(JOBS);
      expect(q.rows.every((r) => r.state === 'completed' && r.retry_count === 0)).toBe(true);
    } finally {
      await db.end();
    }
  }, 180_000);

  it('stops cleanly on SIGTERM', async () => {
    for (const w of workers) w.child.kill('SIGTERM');
    const codes = await Promise.all(workers.map((w) => w.exit));
    expect(codes).toEqual([0, 0]);
    for (const w of workers) expect(w.stderr.join('')).toMatch(/stopping after the analyses/);
  }, 60_000);
});
