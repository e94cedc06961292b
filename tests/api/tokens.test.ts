// API tokens for robots (CLI, CI): made once and shown once, stored only as a hash, used as
// `Authorization: Bearer sl_…`, revocable, and every token and role change audited.
// Sources: interfaces.md "HTTP API" (tokens stored hashed; roles table: own tokens for analyst,
// lead, admin; others' tokens for admin; every state change audited) and common practice for
// secrets (OWASP: store a one-way hash, show the secret once, never log it).
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { apikey, audit } from '../../server/db/schema.js';
import { quietFit } from '../helpers/results.js';
import { ENGINES, startTestServer, type TestServer } from '../helpers/server.js';

interface AuditItem {
  action: string;
  actor: { id: string; email: string } | null;
  target_id: string;
  before: Record<string, unknown> | null;
  after: Record<string, unknown> | null;
}

describe.each(ENGINES)('API tokens on %s', (engine) => {
  let t: TestServer;
  const as = (who: string) => ({ Cookie: t.people[who].cookie, Origin: t.url });
  const post = (who: string, path: string, body: object) =>
    t.http.post(path).set(as(who)).send(body);
  const get = (who: string, path: string) => t.http.get(path).set(as(who));
  const del = (who: string, path: string) => t.http.delete(path).set(as(who));
  const bearer = (token: string) => ({ Authorization: `Bearer ${token}` });
  const auditOf = async (action: string, target?: string): Promise<AuditItem[]> => {
    const q = `/api/audit?action=${action}&page_size=500${target ? `&target=${target}` : ''}`;
    const r = await get('admin', q);
    expect(r.status).toBe(200);
    return r.body.items;
  };

  beforeAll(async () => {
    t = await startTestServer(engine, {
      guest: 'viewer',
      ana: 'analyst',
      ben: 'analyst',
      rob: 'analyst',
      lead: 'lead',
      admin: 'admin',
    });
  }, 60_000);
  afterAll(() => t?.close());

  it('creates a token, shows it once, and stores only a hash of it', async () => {
    const made = await post('ana', '/api/tokens', { name: 'ana laptop' });
    expect(made.status).toBe(201);
    const token: string = made.body.token;
    expect(token).toMatch(/^sl_[A-Za-z0-9_-]{32,}$/);
    expect(made.body).toMatchObject({
      name: 'ana laptop',
      user_id: t.people.ana.id,
      enabled: true,
      last_used_at: null,
    });
    // a short, non-secret prefix to recognise it by; never the whole token
    expect(token.startsWith(made.body.start)).toBe(true);
    expect(made.body.start.length).toBeLessThan(12);

    // listing shows the token's metadata, never the token
    const list = await get('ana', '/api/tokens');
    const listed = list.body.items.find((x: { id: string }) => x.id === made.body.id);
    expect(listed).toMatchObject({ name: 'ana laptop', start: made.body.start });
    expect(listed).not.toHaveProperty('token');
    expect(list.text).not.toContain(token);

    // the database: the key column is not the token, and no column holds it or its secret part
    const db = t.running.services.db;
    const [row] = await db.select().from(apikey).where(eq(apikey.id, made.body.id));
    expect(row.referenceId).toBe(t.people.ana.id);
    expect(row.key).not.toBe(token);
    expect(row.key.length).toBeGreaterThanOrEqual(32);
    const secret = token.slice(made.body.start.length);
    for (const dump of [
      JSON.stringify(await db.select().from(apikey)),
      JSON.stringify(await db.select().from(audit)),
    ]) {
      expect(dump).not.toContain(token);
      expect(dump).not.toContain(secret);
    }
  });

  it('pushes a run with the token (no cookie, no Origin) and records when it was last used', async () => {
    const made = await post('ben', '/api/tokens', { name: 'ci push' });
    const token: string = made.body.token;
    const before = Date.now();
    const me = await t.http.get('/api/me').set(bearer(token));
    expect(me.status).toBe(200);
    expect(me.body).toMatchObject({ email: 'ben@saltbush.test', role: 'analyst', via: 'token' });

    const r = await t.http
      .post('/api/runs')
      .set(bearer(token))
      .send({ result: quietFit('SBP-C') });
    expect(r.status, r.text).toBe(201);
    expect(r.body.created_by.email).toBe('ben@saltbush.test');
    const after = Date.now();

    const listed = (await get('ben', '/api/tokens')).body.items.find(
      (x: { id: string }) => x.id === made.body.id,
    );
    expect(listed.last_used_at).not.toBeNull();
    const used = Date.parse(listed.last_used_at);
    expect(used).toBeGreaterThanOrEqual(before - 1000);
    expect(used).toBeLessThanOrEqual(after + 1000);
  });

  it('a revoked token is refused with 401 invalid_token', async () => {
    const made = await post('ana', '/api/tokens', { name: 'short-lived' });
    const token: string = made.body.token;
    expect((await t.http.get('/api/runs').set(bearer(token))).status).toBe(200);
    expect((await del('ana', `/api/tokens/${made.body.id}`)).status).toBe(204);
    for (const r of [
      await t.http.get('/api/runs').set(bearer(token)),
      await t.http
        .post('/api/runs')
        .set(bearer(token))
        .send({ result: quietFit('SBP-C') }),
    ]) {
      expect(r.status).toBe(401);
      expect(r.body.error.code).toBe('invalid_token');
    }
    const listed = (await get('ana', '/api/tokens')).body.items.find(
      (x: { id: string }) => x.id === made.body.id,
    );
    expect(listed.enabled).toBe(false);
    expect((await del('ana', `/api/tokens/no-such-token`)).status).toBe(404);
  });

  it('a malformed Authorization header is 401 and never falls back to the cookie', async () => {
    const made = await post('ana', '/api/tokens', { name: 'well-formed' });
    for (const header of [
      'Basic YW5hOnNlY3JldA==',
      'Bearer',
      'Bearer ',
      `Bearer ${made.body.token} extra`,
      `Token ${made.body.token}`,
      made.body.token,
    ]) {
      // with ana's valid session cookie as well: the broken header still decides
      const r = await t.http.get('/api/me').set({ ...as('ana'), Authorization: header });
      expect(r.status, header).toBe(401);
      expect(r.body.error.code, header).toBe('unauthenticated');
      expect(r.body.error.message).toMatch(/Bearer <token>/);
    }
    // well-formed but unknown
    const r = await t.http.get('/api/me').set(bearer(`sl_${'x'.repeat(64)}`));
    expect(r.status).toBe(401);
    expect(r.body.error.code).toBe('invalid_token');
    // the scheme is case-insensitive (RFC 9110 §11.1)
    expect(
      (await t.http.get('/api/me').set({ Authorization: `bearer ${made.body.token}` })).status,
    ).toBe(200);
  });

  it('a viewer cannot make or list tokens; the side doors of the auth library are closed too', async () => {
    let r = await post('guest', '/api/tokens', { name: 'viewer robot' });
    expect(r.status).toBe(403);
    expect(r.body.error.code).toBe('forbidden');
    expect((await get('guest', '/api/tokens')).status).toBe(403);
    const db = t.running.services.db;
    const count = async () => (await db.select({ id: apikey.id }).from(apikey)).length;
    const n = await count();
    r = await post('guest', '/api/auth/api-key/create', { name: 'side door' });
    expect(r.status).toBe(404);
    expect(await count()).toBe(n);
  });

  it("an analyst cannot list, make or revoke other people's tokens", async () => {
    const bens = await post('ben', '/api/tokens', { name: 'ben ci' });
    let r = await get('ana', '/api/tokens?user=all');
    expect(r.status).toBe(403);
    // ana's own list holds only ana's tokens
    r = await get('ana', '/api/tokens');
    expect(r.status).toBe(200);
    expect(r.body.items.length).toBeGreaterThan(0);
    expect(r.body.items.every((x: { user_id: string }) => x.user_id === t.people.ana.id)).toBe(
      true,
    );
    r = await post('ana', '/api/tokens', { name: 'for ben', user_id: t.people.ben.id });
    expect(r.status).toBe(403);
    r = await del('ana', `/api/tokens/${bens.body.id}`);
    expect(r.status).toBe(403);
    // a lead neither: others' tokens are the admin's (roles table)
    expect((await del('lead', `/api/tokens/${bens.body.id}`)).status).toBe(403);
    // ben's token still works
    expect((await t.http.get('/api/me').set(bearer(bens.body.token))).status).toBe(200);
  });

  it('an admin makes a token for another user, lists everyone’s, and revokes it', async () => {
    const r = await post('admin', '/api/tokens', { name: 'nightly ci', user_id: t.people.rob.id });
    expect(r.status).toBe(201);
    expect(r.body.user_id).toBe(t.people.rob.id);
    // the token acts as its owner, with the owner's role (not the admin's)
    const me = await t.http.get('/api/me').set(bearer(r.body.token));
    expect(me.body).toMatchObject({ email: 'rob@saltbush.test', role: 'analyst' });
    expect((await t.http.get('/api/audit').set(bearer(r.body.token))).status).toBe(403);

    const all = await get('admin', '/api/tokens?user=all');
    expect(all.body.items.map((x: { id: string }) => x.id)).toContain(r.body.id);
    expect(new Set(all.body.items.map((x: { user_id: string }) => x.user_id)).size).toBeGreaterThan(
      2,
    );
    expect((await get('rob', '/api/tokens')).body.items.map((x: { id: string }) => x.id)).toEqual([
      r.body.id,
    ]);

    expect((await del('admin', `/api/tokens/${r.body.id}`)).status).toBe(204);
    const after = await t.http.get('/api/me').set(bearer(r.body.token));
    expect(after.status).toBe(401);
    expect(after.body.error.code).toBe('invalid_token');
    // a token for a user that does not exist
    expect(
      (await post('admin', '/api/tokens', { name: 'ghost', user_id: 'no-such-user' })).status,
    ).toBe(404);
  });

  it('a role change applies to tokens at once', async () => {
    const made = await post('rob', '/api/tokens', { name: 'rob push' });
    const push = () =>
      t.http
        .post('/api/runs')
        .set(bearer(made.body.token))
        .send({ result: quietFit('SBP-D') });
    expect((await push()).status).toBe(201);
    const r = await t.http
      .patch(`/api/users/${t.people.rob.id}`)
      .set(as('admin'))
      .send({ role: 'viewer' });
    expect(r.status).toBe(200);
    expect(r.body.role).toBe('viewer');
    const refused = await push();
    expect(refused.status).toBe(403);
    expect(refused.body.error.code).toBe('forbidden');
    // a viewer still reads with it
    expect((await t.http.get('/api/runs').set(bearer(made.body.token))).status).toBe(200);
  });

  it('every token create and revoke, and every role change, writes an audit entry', async () => {
    const made = await post('lead', '/api/tokens', { name: 'lead audit' });
    await del('lead', `/api/tokens/${made.body.id}`);
    const forRob = await post('admin', '/api/tokens', { name: 'rob 2', user_id: t.people.rob.id });
    await del('admin', `/api/tokens/${forRob.body.id}`);
    const promoted = await t.http
      .patch(`/api/users/${t.people.guest.id}`)
      .set(as('admin'))
      .send({ role: 'analyst' });
    expect(promoted.status).toBe(200);

    const creates = await auditOf('token.create');
    const revokes = await auditOf('token.revoke');
    const roles = await auditOf('user.role');

    expect(creates.find((a) => a.target_id === made.body.id)).toMatchObject({
      actor: { email: 'lead@saltbush.test' },
      after: { name: 'lead audit', user_id: t.people.lead.id },
    });
    expect(revokes.find((a) => a.target_id === made.body.id)).toMatchObject({
      actor: { email: 'lead@saltbush.test' },
      before: { enabled: true },
      after: { enabled: false },
    });
    // the admin acting on rob's token is recorded as the admin, naming rob as the owner
    expect(creates.find((a) => a.target_id === forRob.body.id)).toMatchObject({
      actor: { email: 'admin@saltbush.test' },
      after: { user_id: t.people.rob.id },
    });
    expect(revokes.find((a) => a.target_id === forRob.body.id)).toMatchObject({
      actor: { email: 'admin@saltbush.test' },
      after: { enabled: false, user_id: t.people.rob.id },
    });
    expect(roles.find((a) => a.target_id === t.people.guest.id)).toMatchObject({
      actor: { email: 'admin@saltbush.test' },
      before: { role: 'viewer' },
      after: { role: 'analyst' },
    });
    expect(roles.find((a) => a.target_id === t.people.rob.id)).toMatchObject({
      before: { role: 'analyst' },
      after: { role: 'viewer' },
    });

    // one entry per token in the table, one revoke per token that was revoked through the API
    const rows = await t.running.services.db.select().from(apikey);
    expect(new Set(creates.map((a) => a.target_id))).toEqual(new Set(rows.map((k) => k.id)));
    const revoked = rows.filter((k) => k.enabled === false).map((k) => k.id);
    expect(new Set(revokes.map((a) => a.target_id))).toEqual(new Set(revoked));
    // an unchanged role writes nothing
    const n = roles.length;
    await t.http
      .patch(`/api/users/${t.people.guest.id}`)
      .set(as('admin'))
      .send({ role: 'analyst' });
    expect((await auditOf('user.role')).length).toBe(n);
  });
  it('scopes: read only reads, push only pushes, check only checks', async () => {
    const mk = async (scopes: string[]) => {
      const r = await post('ben', '/api/tokens', { name: `ben ${scopes.join('+')}`, scopes });
      expect(r.status, r.text).toBe(201);
      expect(r.body.scopes).toEqual(scopes);
      return bearer(r.body.token);
    };
    const [read, push, check] = [await mk(['read']), await mk(['push']), await mk(['check'])];
    type H = Record<string, string>;
    const list = (h: H) => t.http.get('/api/runs').set(h);
    const pushRun = (h: H) =>
      t.http
        .post('/api/runs')
        .set(h)
        .send({ result: quietFit('SBP-C', 2e-6) });
    const checkRun = (h: H) =>
      t.http
        .post('/api/baselines/check')
        .set(h)
        .send({ results: [quietFit('SBP-A')] });
    expect((await list(read)).status).toBe(200);
    expect((await pushRun(push)).status).toBe(201);
    expect((await checkRun(check)).status).toBe(200);
    for (const [h, call, need] of [
      [read, pushRun, 'push'],
      [read, checkRun, 'check'],
      [push, list, 'read'],
      [push, checkRun, 'check'],
      [check, list, 'read'],
      [check, pushRun, 'push'],
    ] as const) {
      const r = await call(h);
      expect(r.status, r.text).toBe(403);
      expect(r.body.error.code).toBe('insufficient_scope');
      expect(r.body.error.message).toContain(`needs the ${need} scope`);
    }
    // unknown or repeated scopes are refused when the token is made
    expect((await post('ben', '/api/tokens', { name: 'x', scopes: ['admin'] })).status).toBe(400);
    expect((await post('ben', '/api/tokens', { name: 'x', scopes: [] })).status).toBe(400);
    expect((await post('ben', '/api/tokens', { name: 'x', scopes: ['read', 'read'] })).status).toBe(
      400,
    );
  });

  it('a token never manages tokens or accounts, whatever its scopes and role', async () => {
    const made = await post('admin', '/api/tokens', { name: 'admin robot' });
    expect(made.body.scopes).toEqual(['read', 'push', 'check']);
    const h = bearer(made.body.token);
    for (const r of [
      await t.http.post('/api/tokens').set(h).send({ name: 'child' }),
      await t.http.delete(`/api/tokens/${made.body.id}`).set(h),
      await t.http.patch(`/api/users/${t.people.ben.id}`).set(h).send({ role: 'lead' }),
      await t.http
        .post('/api/users')
        .set(h)
        .send({ email: 'new@saltbush.test', name: 'New', role: 'admin' }),
    ]) {
      expect(r.status, r.text).toBe(403);
      expect(r.body.error.code).toBe('session_required');
    }
    const ben = await get('admin', '/api/users');
    expect(ben.body.items.find((u: { id: string }) => u.id === t.people.ben.id).role).toBe(
      'analyst',
    );
  });

  it('every token expires: a year by default, 1–730 days on request; an expired one is refused', async () => {
    const day = 86_400_000;
    const near = (iso: string, days: number) =>
      Math.abs(Date.parse(iso) - (Date.now() + days * day)) < 60_000;
    const yearly = await post('ana', '/api/tokens', { name: 'ana default' });
    expect(near(yearly.body.expires_at, 365)).toBe(true);
    const week = await post('ana', '/api/tokens', { name: 'ana week', expires_in_days: 7 });
    expect(week.status).toBe(201);
    expect(near(week.body.expires_at, 7)).toBe(true);
    for (const d of [0, 731, 1.5])
      expect((await post('ana', '/api/tokens', { name: 'bad', expires_in_days: d })).status).toBe(
        400,
      );
    const h = bearer(week.body.token);
    expect((await t.http.get('/api/runs').set(h)).status).toBe(200);
    // a week later (moved in the database rather than waited for)
    await t.running.services.db
      .update(apikey)
      .set({ expiresAt: new Date(Date.now() - 1000) })
      .where(eq(apikey.id, week.body.id));
    const r = await t.http.get('/api/runs').set(h);
    expect(r.status).toBe(401);
    expect(r.body.error.code).toBe('invalid_token');
  });

  it('a token made without a lifetime (as the demo seed makes them) also expires in a year', async () => {
    // the library counts defaultExpiresIn in seconds: a value in milliseconds once gave the
    // demo tokens a lifetime of about a thousand years
    const made = await t.running.services.auth.api.createApiKey({
      body: { name: 'seeded', userId: t.people.rob.id },
    });
    const [row] = await t.running.services.db
      .select({ expiresAt: apikey.expiresAt })
      .from(apikey)
      .where(eq(apikey.id, made.id));
    const days = (row.expiresAt!.getTime() - Date.now()) / 86_400_000;
    expect(days).toBeGreaterThan(364.99);
    expect(days).toBeLessThan(365.01);
  });
});
