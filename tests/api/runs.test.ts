// Correction runs through the HTTP API: create, list, read, export, submit, review (four-eyes,
// optimistic concurrency), baselines, compare, e-mail notices and the audit trail.
// Rules under test: interfaces.md "HTTP API" (roles table, run states, approval rules).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parse } from 'csv-parse/sync';
import { ENGINES, startTestServer, type TestServer } from '../helpers/server.js';
import { dmFit, quietFit, scatterFit } from '../helpers/results.js';

const waitFor = async <T>(f: () => Promise<T | undefined>, ms = 10_000): Promise<T> => {
  const end = Date.now() + ms;
  for (;;) {
    const v = await f();
    if (v !== undefined) return v;
    if (Date.now() > end) throw new Error('timed out');
    await new Promise((r) => setTimeout(r, 50));
  }
};

describe.each(ENGINES)('correction runs on %s', (engine) => {
  let t: TestServer;
  const as = (who: string) => ({ Cookie: t.people[who].cookie, Origin: t.url });
  const post = (who: string, path: string, body: unknown) =>
    t.http
      .post(path)
      .set(as(who))
      .send(body as object);
  const get = (who: string, path: string) => t.http.get(path).set(as(who));

  beforeAll(async () => {
    t = await startTestServer(engine);
    // SBP-B is the group's reference pulsar (demo-scenario.md)
    const r = await post('lead', '/api/pulsars', { name: 'SBP-B', is_reference: true });
    expect(r.status).toBe(201);
  }, 60_000);
  afterAll(() => t?.close());

  it('creates a draft run from a result, recording inputs, software and constant', async () => {
    const r = await post('ana', '/api/runs', { result: quietFit(), title: 'first pass' });
    expect(r.status).toBe(201);
    expect(r.headers.location).toBe(`/api/runs/${r.body.id}`);
    expect(r.body).toMatchObject({
      kind: 'dm-fit',
      state: 'draft',
      version: 1,
      pulsar: 'SBP-B',
      is_reference: true,
      software_version: '0.1.0',
      constant: { name: 'conventional' },
      input: [{ path: 'toas.csv', sha256: 'a'.repeat(64), rows: 40 }],
      created_by: { email: 'ana@saltbush.test' },
      summary: { n_visits: 6, n_fitted: 6 },
    });
    expect(r.body.url).toBe(`${t.url}/runs/${r.body.id}`);
    const back = await get('guest', `/api/runs/${r.body.id}`);
    expect(back.status).toBe(200);
    expect(back.body.result).toEqual(quietFit());
  });

  it('refuses a result with several pulsars, and a bad body with field paths', async () => {
    const two = quietFit();
    two.visits[1].source = 'SBP-C';
    let r = await post('ana', '/api/runs', { result: two });
    expect(r.status).toBe(400);
    expect(r.body.error.message).toMatch(/SBP-B, SBP-C/);

    const bad = quietFit() as unknown as { visits: Record<string, unknown>[] };
    bad.visits[3].dm_err = -1;
    r = await post('ana', '/api/runs', { result: bad });
    expect(r.status).toBe(400);
    expect(r.body.error.code).toBe('invalid_request');
    expect(r.body.error.details).toContainEqual(
      expect.objectContaining({ path: 'result.visits.3.dm_err' }),
    );

    r = await post('ana', '/api/runs', { result: { schema: 'sightline/nope@1' } });
    expect(r.status).toBe(400);
    expect(r.body.error.details[0].path).toBe('result.schema');

    r = await t.http
      .post('/api/runs')
      .set({ ...as('ana'), 'Content-Type': 'application/json' })
      .send('{"result": ');
    expect(r.status).toBe(400);
    expect(r.body.error.code).toBe('invalid_json');
  });

  it('walks draft → in_review → returned → in_review → approved, with four eyes and versions', async () => {
    const made = await post('ana', '/api/runs', { result: quietFit('SBP-B', 1e-5) });
    const id = made.body.id as string;

    // only the creator submits
    expect((await post('ben', `/api/runs/${id}/submit`, {})).status).toBe(403);
    let r = await post('ana', `/api/runs/${id}/submit`, { version: 1 });
    expect(r.status).toBe(200);
    expect(r.body).toMatchObject({ state: 'in_review', version: 2 });
    expect((await post('ana', `/api/runs/${id}/submit`, {})).status).toBe(409);

    // analysts and admins do not approve; a lead needs the version they reviewed
    r = await post('ben', `/api/runs/${id}/reviews`, { decision: 'approve', version: 2 });
    expect(r.status).toBe(403);
    r = await post('admin', `/api/runs/${id}/reviews`, { decision: 'approve', version: 2 });
    expect(r.status).toBe(403);
    r = await post('lead', `/api/runs/${id}/reviews`, { decision: 'approve' });
    expect(r.status).toBe(400);
    expect(r.body.error.details[0].path).toBe('version');

    // returning needs a comment; then the analyst fixes and resubmits
    r = await post('lead', `/api/runs/${id}/reviews`, { decision: 'return', version: 2 });
    expect(r.status).toBe(400);
    expect(r.body.error.details[0].path).toBe('comment');
    r = await post('lead', `/api/runs/${id}/reviews`, {
      decision: 'return',
      version: 2,
      comment: 'visit 4 looks clipped; re-run with --clip 5',
    });
    expect(r.status).toBe(201);
    expect(r.body.run).toMatchObject({ state: 'returned', version: 3 });
    r = await post('ana', `/api/runs/${id}/submit`, { version: 3 });
    expect(r.body).toMatchObject({ state: 'in_review', version: 4 });

    // a stale approval (version 2) is refused with 409 and the current version, never applied
    r = await post('lead', `/api/runs/${id}/reviews`, { decision: 'approve', version: 2 });
    expect(r.status).toBe(409);
    expect(r.body.error).toMatchObject({
      code: 'stale_version',
      details: { current_version: 4, state: 'in_review' },
    });
    expect((await get('guest', `/api/runs/${id}`)).body.state).toBe('in_review');

    r = await post('lead', `/api/runs/${id}/reviews`, {
      decision: 'approve',
      version: 4,
      comment: 'fine',
    });
    expect(r.status).toBe(201);
    expect(r.body.run).toMatchObject({ state: 'approved', version: 5 });
    const detail = await get('guest', `/api/runs/${id}`);
    expect(detail.body.reviews.map((x: { decision: string }) => x.decision)).toEqual([
      'return',
      'approve',
    ]);
    expect(detail.body.baseline).toMatchObject({ state: 'active' });
  });

  it('a lead never approves their own run', async () => {
    const made = await post('lead', '/api/runs', { result: quietFit('SBP-C'), submit: true });
    expect(made.body.state).toBe('in_review');
    const r = await post('lead', `/api/runs/${made.body.id}/reviews`, {
      decision: 'approve',
      version: made.body.version,
    });
    expect(r.status).toBe(403);
    expect(r.body.error.code).toBe('own_run');
    // another lead may
    const ok = await post('lead2', `/api/runs/${made.body.id}/reviews`, {
      decision: 'approve',
      version: made.body.version,
    });
    expect(ok.status).toBe(201);
  });

  it('two leads approving the same version at once: exactly one wins, the other gets 409', async () => {
    const made = await post('ana', '/api/runs', { result: quietFit('SBP-E'), submit: true });
    const body = { decision: 'approve', version: made.body.version };
    const [a, b] = await Promise.all([
      post('lead', `/api/runs/${made.body.id}/reviews`, body),
      post('lead2', `/api/runs/${made.body.id}/reviews`, body),
    ]);
    expect([a.status, b.status].sort()).toEqual([201, 409]);
  });

  it('two leads approving two runs of one reference pulsar at once: one approved, one superseded, one baseline', async () => {
    // common practice for review workflows: the later of two approvals replaces the earlier.
    // Without serialising approvals per pulsar, PostgreSQL's READ COMMITTED let both stay
    // approved (seen in tests/api/crash.test.ts); several rounds give the race its chance.
    for (let round = 0; round < 6; round++) {
      const one = await post('ana', '/api/runs', { result: quietFit('SBP-B', 3e-5), submit: true });
      const two = await post('ana', '/api/runs', { result: quietFit('SBP-B', 4e-5), submit: true });
      const [a, b] = await Promise.all([
        post('lead', `/api/runs/${one.body.id}/reviews`, {
          decision: 'approve',
          version: one.body.version,
        }),
        post('lead2', `/api/runs/${two.body.id}/reviews`, {
          decision: 'approve',
          version: two.body.version,
        }),
      ]);
      expect([a.status, b.status]).toEqual([201, 201]);
      const approved = await get('guest', '/api/runs?pulsar=SBP-B&kind=dm-fit&state=approved');
      expect(approved.body.items.map((r: { id: string }) => r.id)).toHaveLength(1);
      const winner = approved.body.items[0].id;
      expect([one.body.id, two.body.id]).toContain(winner);
      const baselines = await get('guest', '/api/baselines');
      const active = baselines.body.items.filter(
        (x: { pulsar: string; kind: string }) => x.pulsar === 'SBP-B' && x.kind === 'dm-fit',
      );
      expect(active).toHaveLength(1);
      expect(active[0].run_id).toBe(winner);
    }
  });

  it("approving a reference pulsar's run makes it the baseline and supersedes the previous one", async () => {
    const before = await get('guest', '/api/baselines');
    const old = before.body.items.find(
      (b: { pulsar: string; kind: string }) => b.pulsar === 'SBP-B' && b.kind === 'dm-fit',
    );
    expect(old).toBeDefined();
    const made = await post('ana', '/api/runs', { result: quietFit('SBP-B', 2e-5), submit: true });
    const r = await post('lead', `/api/runs/${made.body.id}/reviews`, {
      decision: 'approve',
      version: made.body.version,
    });
    expect(r.status).toBe(201);
    const after = await get('guest', '/api/baselines');
    const now = after.body.items.filter(
      (b: { pulsar: string; kind: string }) => b.pulsar === 'SBP-B' && b.kind === 'dm-fit',
    );
    expect(now).toHaveLength(1);
    expect(now[0].run_id).toBe(made.body.id);
    const history = await get('guest', '/api/baselines?all=1');
    expect(history.body.items.find((b: { id: number }) => b.id === old.id)).toMatchObject({
      state: 'superseded',
      run_state: 'superseded',
    });
    expect((await get('guest', `/api/runs/${old.run_id}`)).body.state).toBe('superseded');
  });

  it('lists runs with filters and pagination', async () => {
    await post('ben', '/api/runs', {
      result: scatterFit('SBP-D', [
        [700, 40, 2],
        [1400, 3, 0.3],
      ]),
    });
    let r = await get('guest', '/api/runs?pulsar=SBP-B&kind=dm-fit');
    expect(r.status).toBe(200);
    expect(r.body.items.every((x: { pulsar: string }) => x.pulsar === 'SBP-B')).toBe(true);
    expect(r.body.items[0]).not.toHaveProperty('result');
    r = await get('guest', '/api/runs?kind=scatter-fit');
    expect(r.body.total).toBe(1);
    expect(r.body.items[0]).toMatchObject({
      pulsar: 'SBP-D',
      created_by: { email: 'ben@saltbush.test' },
    });
    r = await get('guest', '/api/runs?state=approved,superseded');
    expect(r.body.items.length).toBeGreaterThanOrEqual(3);
    r = await get('ana', '/api/runs?creator=me');
    expect(
      r.body.items.every(
        (x: { created_by: { email: string } }) => x.created_by.email === 'ana@saltbush.test',
      ),
    ).toBe(true);
    const all = (await get('guest', '/api/runs?page_size=200')).body;
    const p1 = (await get('guest', '/api/runs?page_size=2&page=1')).body;
    const p2 = (await get('guest', '/api/runs?page_size=2&page=2')).body;
    expect(p1.total).toBe(all.total);
    expect([...p1.items, ...p2.items].map((x: { id: string }) => x.id)).toEqual(
      all.items.slice(0, 4).map((x: { id: string }) => x.id),
    );
    r = await get('guest', `/api/runs?from=2999-01-01`);
    expect(r.body.total).toBe(0);
    r = await get('guest', '/api/runs?state=bogus&page_size=0');
    expect(r.status).toBe(400);
    expect(r.body.error.details.map((d: { path: string }) => d.path).sort()).toEqual([
      'query.page_size',
      'query.state.0',
    ]);
  });

  it('exports a run as JSON (the result as pushed) and CSV (one row per visit)', async () => {
    const made = await post('ana', '/api/runs', { result: quietFit('SBP-A') });
    const json = await get('guest', `/api/runs/${made.body.id}/export?format=json`);
    expect(json.headers['content-disposition']).toMatch(/attachment; filename="SBP-A-dm-fit-/);
    expect(JSON.parse(json.text)).toEqual(quietFit('SBP-A'));
    const csv = await get('guest', `/api/runs/${made.body.id}/export?format=csv`);
    expect(csv.headers['content-type']).toMatch(/text\/csv/);
    const rows = parse(csv.text, { columns: true }) as Record<string, string>[];
    expect(rows).toHaveLength(6);
    expect(Number(rows[2].dm)).toBe(quietFit('SBP-A').visits[2].dm);
    expect((await get('guest', `/api/runs/${made.body.id}/export?format=xml`)).status).toBe(400);
  });

  it('compares two runs visit by visit in σ units', async () => {
    const a = await post('ana', '/api/runs', {
      result: dmFit('SBP-F', [
        { mjd: 60300, dm: 251.4, dm_err: 0.001 },
        { mjd: 60314, dm: 251.4, dm_err: 0.001 },
      ]),
    });
    const b = await post('ana', '/api/runs', {
      result: dmFit('SBP-F', [
        { mjd: 60300.02, dm: 251.404, dm_err: 0.001 },
        { mjd: 60328, dm: 251.4, dm_err: 0.001 },
      ]),
    });
    const r = await get('guest', `/api/compare?a=${a.body.id}&b=${b.body.id}`);
    expect(r.status).toBe(200);
    // Δ = 0.004, σ = √2 × 0.001 → z = 2.83 (hand computation)
    expect(r.body.items).toHaveLength(1);
    expect(r.body.items[0].z).toBeCloseTo(0.004 / Math.SQRT2 / 0.001, 6);
    expect(r.body.summary).toMatchObject({ n_matched: 1, n_a_only: 1, n_b_only: 1 });
    const s = await post('ana', '/api/runs', { result: scatterFit('SBP-F', [[700, 1, 0.1]]) });
    const bad = await get('guest', `/api/compare?a=${a.body.id}&b=${s.body.id}`);
    expect(bad.status).toBe(400);
    expect(bad.body.error.code).toBe('kind_mismatch');
    expect((await get('guest', '/api/compare?a=x&b=y')).status).toBe(400);
  });

  it('queues e-mail notices on submit and decision; the catcher receives them', async () => {
    const made = await post('ben', '/api/runs', { result: quietFit('SBP-A', 3e-5), submit: true });
    await post('lead', `/api/runs/${made.body.id}/reviews`, {
      decision: 'return',
      version: made.body.version,
      comment: 'needs the solar-wind term',
    });
    const mail = await waitFor(async () => {
      const r = await get('admin', '/api/mail');
      const mine = r.body.items.filter(
        // the catcher may store a message a moment before the sender marks it sent
        (m: { body: string; captured: boolean; status: string }) =>
          m.body.includes(made.body.id) && m.captured && m.status === 'sent',
      );
      return mine.length >= 3 ? mine : undefined;
    });
    const to = mail.map((m: { to: string }) => m.to).sort();
    // both leads hear of the submission; the analyst hears of the return
    expect(to).toEqual(['ben@saltbush.test', 'lead2@saltbush.test', 'lead@saltbush.test']);
    const back = mail.find((m: { to: string }) => m.to === 'ben@saltbush.test');
    expect(back.subject).toMatch(/SBP-A dm-fit run returned/);
    expect(back.body).toMatch(/needs the solar-wind term/);
    expect(back.status).toBe('sent');
  });

  it('keeps each baseline check and shows the last one beside the baseline; lists activity', async () => {
    const moved = quietFit('SBP-B', 2e-5);
    moved.visits[0].dm = (moved.visits[0].dm as number) + 5e-4; // 5σ of the baseline's 1e-4
    const r = await post('guest', '/api/baselines/check', { results: [moved] });
    expect(r.status).toBe(200);
    expect(r.body.pass).toBe(false);
    const b = await get('guest', '/api/baselines');
    const sbpB = b.body.items.find((x: { pulsar: string }) => x.pulsar === 'SBP-B');
    expect(sbpB.last_check).toMatchObject({ status: 'fail', n_failed: 1, tolerance_sigma: 3 });
    expect(sbpB.last_check.worst_deviation_sigma).toBeCloseTo(5, 6);
    const ok = await post('guest', '/api/baselines/check', { results: [quietFit('SBP-B', 2e-5)] });
    expect(ok.body.pass).toBe(true);
    const again = await get('guest', '/api/baselines');
    expect(
      again.body.items.find((x: { pulsar: string }) => x.pulsar === 'SBP-B').last_check.status,
    ).toBe('pass');
    const activity = await get('guest', '/api/activity?limit=5');
    expect(activity.status).toBe(200);
    expect(activity.body.items).toHaveLength(5);
    expect(activity.body.items[0]).toHaveProperty('action');
  });

  it('writes an audit entry for every state change', async () => {
    const made = await post('ana', '/api/runs', { result: quietFit('SBP-C', 1e-5) });
    await post('ana', `/api/runs/${made.body.id}/submit`, {});
    await post('lead', `/api/runs/${made.body.id}/reviews`, {
      decision: 'comment',
      comment: 'looking',
    });
    const r = await get('admin', `/api/audit?target=${made.body.id}&page_size=50`);
    expect(r.status).toBe(200);
    const actions = r.body.items.map((a: { action: string }) => a.action).reverse();
    expect(actions).toEqual(['run.create', 'run.submit', 'run.comment']);
    const submit = r.body.items.find((a: { action: string }) => a.action === 'run.submit');
    expect(submit).toMatchObject({
      actor: { email: 'ana@saltbush.test' },
      before: { state: 'draft', version: 1 },
      after: { state: 'in_review', version: 2 },
    });
    expect(submit.request_id).toMatch(/^[0-9a-f-]{36}$/);
    // every sign-in is in the trail too (each test person signed in once at start)
    const signIns = await get('admin', '/api/audit?action=auth.sign_in&page_size=100');
    const who = signIns.body.items.map((a: { actor: { email: string } }) => a.actor.email);
    for (const p of Object.values(t.people)) expect(who).toContain(p.email);
  });
});
