// Crash test (supersedes the single-kill durability test): a real server process takes a stream of pushes (submitted for review) and of
// approvals and returns by two leads racing each other, and is killed hard (SIGKILL) at a
// seeded random moment; it is started again on the same data and the invariants are checked,
// round after round. Invariants (interfaces.md "HTTP API" and common practice for durable
// services: an acknowledged write survives a crash):
//   - every push that got 201 is there with the exact result sent;
//   - every approval or return that got 201 is in force (approved/superseded, or returned);
//   - no run is both approved and returned, nor approved twice;
//   - exactly one active baseline per reference pulsar and kind that has an approved run, and it
//     is that pulsar's latest approval;
//   - the audit trail is complete: every run has its run.create entry, every decision its
//     run.approve/run.return entry naming the review, every baseline its baseline.set entry.
// The last two are checked in the database itself after a clean stop at the end.
import { join } from 'node:path';
import { PGlite } from '@electric-sql/pglite';
import pg from 'pg';
import { afterAll, describe, expect, it } from 'vitest';
import { createRng } from '../../shared/sim/random.js';
import { tempDir } from '../helpers/cli.js';
import { freshPgDatabase } from '../helpers/pg.js';
import { quietFit } from '../helpers/results.js';
import { killHard, serve, stopGently, type Served } from '../helpers/serve-process.js';
import { ENGINES } from '../helpers/server.js';

/** Kill–restart rounds per engine (CI runs both engines: 24 crashes in all). */
const ROUNDS = 12;
const PASSWORD = 'crash test password 1';

interface Acked {
  pushes: { id: string; pulsar: string; shift: number }[];
  decisions: { runId: string; decision: 'approve' | 'return' }[];
}

async function signIn(url: string, email: string, password: string): Promise<string> {
  const r = await fetch(`${url}/api/auth/sign-in/email`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', origin: url },
    body: JSON.stringify({ email, password }),
  });
  if (r.status !== 200) throw new Error(`sign-in of ${email}: ${r.status} ${await r.text()}`);
  return r.headers.getSetCookie()[0].split(';')[0];
}

describe.each(ENGINES)('hard kills during pushes and approvals on %s', (engine) => {
  const { dir, cleanup } = tempDir('sightline-crash-');
  const dataDir = join(dir, 'data');
  const env: Record<string, string> = {};
  let drop: (() => Promise<void>) | undefined;
  let server: Served | undefined;
  const acked: Acked = { pushes: [], decisions: [] };

  afterAll(async () => {
    if (server) await killHard(server.child);
    await drop?.();
    cleanup();
  });

  it(`keeps every acknowledged write and every invariant through ${ROUNDS} hard kills`, async () => {
    if (engine === 'postgres') {
      const db = await freshPgDatabase();
      env.DATABASE_URL = db.url;
      drop = db.drop;
    }
    server = await serve(dataDir, env, ['--create-admin', 'admin@saltbush.test']);
    const adminPassword = /with password (\S+)/.exec(server.stderr())![1];
    const admin = await signIn(server.url, 'admin@saltbush.test', adminPassword);
    const adminHeaders = () => ({
      cookie: admin,
      origin: server!.url,
      'content-type': 'application/json',
    });
    for (const [email, role] of [
      ['ana@saltbush.test', 'analyst'],
      ['lead@saltbush.test', 'lead'],
      ['lead2@saltbush.test', 'lead'],
    ])
      expect(
        (
          await fetch(`${server.url}/api/users`, {
            method: 'POST',
            headers: adminHeaders(),
            body: JSON.stringify({ email, name: email.split('@')[0], role, password: PASSWORD }),
          })
        ).status,
      ).toBe(201);
    const ana = await signIn(server.url, 'ana@saltbush.test', PASSWORD);
    const token = (
      (await (
        await fetch(`${server.url}/api/tokens`, {
          method: 'POST',
          headers: { cookie: ana, origin: server.url, 'content-type': 'application/json' },
          body: JSON.stringify({ name: 'crash pipeline', scopes: ['read', 'push'] }),
        })
      ).json()) as { token: string }
    ).token;
    const leads = [
      await signIn(server.url, 'lead@saltbush.test', PASSWORD),
      await signIn(server.url, 'lead2@saltbush.test', PASSWORD),
    ];
    // SBP-A is a reference pulsar: its approvals become baselines
    await fetch(`${server.url}/api/runs`, {
      method: 'POST',
      headers: { authorization: `Bearer ${token}`, 'content-type': 'application/json' },
      body: JSON.stringify({ result: quietFit('SBP-A', 0, 41) }),
    });
    expect(
      (
        await fetch(`${server.url}/api/pulsars/SBP-A`, {
          method: 'PATCH',
          headers: adminHeaders(),
          body: JSON.stringify({ is_reference: true }),
        })
      ).status,
    ).toBe(200);

    const rng = createRng(engine === 'pglite' ? 7001 : 7002);
    let serial = 1;
    for (let round = 0; round < ROUNDS; round++) {
      const url = server.url;
      const victim = server.child;
      let dead = false;
      const round0 = { pushes: acked.pushes.length, decisions: acked.decisions.length };
      const pusher = async () => {
        while (!dead) {
          const shift = serial++ * 1e-7;
          const pulsar = rng.uniform() < 0.6 ? 'SBP-A' : 'SBP-B';
          try {
            const r = await fetch(`${url}/api/runs`, {
              method: 'POST',
              headers: { authorization: `Bearer ${token}`, 'content-type': 'application/json' },
              body: JSON.stringify({ result: quietFit(pulsar, shift, 42), submit: true }),
            });
            if (r.status === 201)
              acked.pushes.push({ id: ((await r.json()) as { id: string }).id, pulsar, shift });
          } catch {
            // cut by the kill: never acknowledged, so never promised
          }
        }
      };
      const reviewer = (cookie: string) => async () => {
        while (!dead) {
          try {
            const list = await fetch(`${url}/api/runs?state=in_review&page_size=10`, {
              headers: { cookie },
            });
            const items = ((await list.json()) as { items: { id: string; version: number }[] })
              .items;
            if (!items.length) {
              await new Promise((r) => setTimeout(r, 20));
              continue;
            }
            const pick = items[rng.int(items.length)];
            const decision = rng.uniform() < 0.7 ? 'approve' : 'return';
            const r = await fetch(`${url}/api/runs/${pick.id}/reviews`, {
              method: 'POST',
              headers: { cookie, origin: url, 'content-type': 'application/json' },
              body: JSON.stringify({ decision, comment: `round ${round}`, version: pick.version }),
            });
            if (r.status === 201) acked.decisions.push({ runId: pick.id, decision });
          } catch {
            // cut by the kill
          }
        }
      };
      const stream = Promise.all([pusher(), pusher(), reviewer(leads[0])(), reviewer(leads[1])()]);
      // seeded moment of death: after 2–7 acknowledged writes in this round, then 0–99 ms more
      // (mid-request for the writes in flight); after 20 s at the latest
      const due = 2 + rng.int(6);
      const started = Date.now();
      const writes = () =>
        acked.pushes.length - round0.pushes + acked.decisions.length - round0.decisions;
      while (writes() < due && Date.now() - started < 20_000)
        await new Promise((r) => setTimeout(r, 5));
      await new Promise((r) => setTimeout(r, rng.int(100)));
      await killHard(victim);
      dead = true;
      await stream;
      server = await serve(dataDir, env);

      // every write acknowledged in this round is there, as acknowledged
      const read = (path: string) =>
        fetch(`${server!.url}${path}`, { headers: { cookie: admin } }).then(
          async (r) => [r.status, await r.json()] as [number, Record<string, unknown>],
        );
      for (const p of acked.pushes.slice(round0.pushes)) {
        const [status, run] = await read(`/api/runs/${p.id}`);
        expect(status, `push ${p.id} of round ${round}`).toBe(200);
        expect(run.result).toEqual(quietFit(p.pulsar, p.shift, 42));
      }
      for (const d of acked.decisions.slice(round0.decisions)) {
        const [, run] = await read(`/api/runs/${d.runId}`);
        expect(
          d.decision === 'approve' ? ['approved', 'superseded'] : ['returned'],
          `${d.decision} of ${d.runId} in round ${round}`,
        ).toContain(run.state);
      }
      const [, baselines] = await read('/api/baselines');
      const active = (baselines.items as { pulsar: string; kind: string }[]).filter(
        (b) => b.pulsar === 'SBP-A',
      );
      if (acked.decisions.some((d) => d.decision === 'approve'))
        expect(active.length).toBeLessThanOrEqual(1);
    }
    expect(acked.pushes.length + acked.decisions.length).toBeGreaterThanOrEqual(2 * ROUNDS);
    expect(acked.decisions.filter((d) => d.decision === 'approve').length).toBeGreaterThan(0);

    // for the README's reliability figures
    console.log(
      `[crash] ${engine}: ${ROUNDS} hard kills survived; ${acked.pushes.length} pushes and ${acked.decisions.length} decisions acknowledged, all kept`,
    );

    // the whole history, in the database itself, after a clean stop
    await stopGently(server.child);
    server = undefined;
    let query: (sql: string) => Promise<Record<string, unknown>[]>;
    let close: () => Promise<void>;
    if (engine === 'postgres') {
      const c = new pg.Client({ connectionString: env.DATABASE_URL });
      await c.connect();
      query = async (sql) => (await c.query(sql)).rows;
      close = () => c.end();
    } else {
      const c = await PGlite.create(join(dataDir, 'db'));
      query = async (sql) => (await c.query<Record<string, unknown>>(sql)).rows;
      close = () => c.close();
    }
    try {
      // no run both approved and returned, none decided twice
      expect(
        await query(`SELECT run_id FROM reviews WHERE decision IN ('approve', 'return')
                     GROUP BY run_id HAVING count(*) > 1`),
      ).toEqual([]);
      // each run's state agrees with its one decision
      expect(
        await query(`SELECT r.id, r.state, v.decision FROM runs r JOIN reviews v ON v.run_id = r.id
                     WHERE (v.decision = 'approve' AND r.state NOT IN ('approved', 'superseded'))
                        OR (v.decision = 'return' AND r.state <> 'returned')`),
      ).toEqual([]);
      // exactly one active baseline for SBP-A's dm-fit, the latest approval's run
      const active =
        await query(`SELECT b.run_id FROM baselines b JOIN pulsars p ON p.id = b.pulsar_id
                                  WHERE p.name = 'SBP-A' AND b.state = 'active'`);
      expect(active).toHaveLength(1);
      const latest = await query(`SELECT r.id FROM runs r JOIN pulsars p ON p.id = r.pulsar_id
                                  WHERE p.name = 'SBP-A' AND r.state = 'approved'`);
      expect(latest).toEqual([{ id: active[0].run_id }]);
      // the audit trail: nothing done without its entry
      expect(
        await query(`SELECT id FROM runs r WHERE NOT EXISTS (SELECT 1 FROM audit a
                     WHERE a.action = 'run.create' AND a.target_id = r.id::text)`),
      ).toEqual([]);
      expect(
        await query(`SELECT v.id FROM reviews v WHERE v.decision IN ('approve', 'return')
                     AND NOT EXISTS (SELECT 1 FROM audit a WHERE a.action = 'run.' || v.decision
                       AND a.target_id = v.run_id::text AND a.after->>'review' = v.id::text)`),
      ).toEqual([]);
      expect(
        await query(`SELECT b.id FROM baselines b WHERE NOT EXISTS (SELECT 1 FROM audit a
                     WHERE a.action = 'baseline.set' AND a.target_id = b.id::text)`),
      ).toEqual([]);
    } finally {
      await close();
    }
  }, 600_000);
});
