// Sessions and sign-in: every sign-in issues a new session (no fixation: a session id known
// before sign-in is never the one after it); sign-out ends that session at once; a role change
// or a disabled account ends all of the person's sessions at once; failed and refused sign-ins
// are audited. Sources: OWASP Session Management Cheat Sheet ("renew the session ID after any
// privilege level change", "invalidate on logout") and common practice for audit trails.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ENGINES, PASSWORD, startTestServer, type TestServer } from '../helpers/server.js';

describe.each(ENGINES)('sessions on %s', (engine) => {
  let t: TestServer;
  const LIMIT = 5;

  beforeAll(async () => {
    t = await startTestServer(engine, {
      cora: 'analyst',
      dev: 'analyst',
      eve: 'viewer',
      admin: 'admin',
    });
  }, 60_000);
  afterAll(() => t?.close());

  const signIn = async (email: string, password = PASSWORD, ip?: string) => {
    const r = await t.http
      .post('/api/auth/sign-in/email')
      .set({ Origin: t.url, ...(ip ? { 'X-Forwarded-For': ip } : {}) })
      .send({ email, password });
    const cookie = (r.headers['set-cookie'] as unknown as string[] | undefined)
      ?.find((c: string) => c.startsWith('sightline.session_token='))
      ?.split(';')[0];
    return { status: r.status, cookie };
  };
  const me = (cookie: string) => t.http.get('/api/me').set({ Cookie: cookie, Origin: t.url });
  const auditOf = async (action: string) =>
    (
      await t.http
        .get(`/api/audit?action=${action}&page_size=500`)
        .set({ Cookie: t.people.admin.cookie, Origin: t.url })
    ).body.items as { target_id: string; after: Record<string, unknown> }[];

  it('issues a new session on every sign-in, never reusing one', async () => {
    const a = await signIn('cora@saltbush.test');
    const b = await signIn('cora@saltbush.test');
    expect(a.status).toBe(200);
    expect(b.status).toBe(200);
    expect(a.cookie).toBeTruthy();
    expect(a.cookie).not.toBe(b.cookie);
    expect(a.cookie).not.toBe(t.people.cora.cookie);
    // a cookie planted before sign-in is replaced, not adopted
    const planted = 'sightline.session_token=planted-by-someone-else';
    const r = await t.http
      .post('/api/auth/sign-in/email')
      .set({ Origin: t.url, Cookie: planted })
      .send({ email: 'cora@saltbush.test', password: PASSWORD });
    const after = (r.headers['set-cookie'] as unknown as string[])
      .find((c) => c.startsWith('sightline.session_token='))!
      .split(';')[0];
    expect(after).not.toBe(planted);
    expect((await me(planted)).status).toBe(401);
    expect((await me(after)).status).toBe(200);
  });

  it('sign-out ends that session at once, and only that one', async () => {
    const a = await signIn('cora@saltbush.test');
    const b = await signIn('cora@saltbush.test');
    const out = await t.http
      .post('/api/auth/sign-out')
      .set({ Cookie: a.cookie!, Origin: t.url })
      .send({});
    expect(out.status).toBe(200);
    expect((await me(a.cookie!)).status).toBe(401);
    expect((await me(b.cookie!)).status).toBe(200);
  });

  it('a role change ends every session of that person at once', async () => {
    const phone = await signIn('dev@saltbush.test');
    const laptop = t.people.dev.cookie;
    expect((await me(phone.cookie!)).status).toBe(200);
    const r = await t.http
      .patch(`/api/users/${t.people.dev.id}`)
      .set({ Cookie: t.people.admin.cookie, Origin: t.url })
      .send({ role: 'lead' });
    expect(r.status, r.text).toBe(200);
    expect((await me(phone.cookie!)).status).toBe(401);
    expect((await me(laptop)).status).toBe(401);
    // signing in again gives a session with the new role
    const again = await signIn('dev@saltbush.test');
    expect((await me(again.cookie!)).body.role).toBe('lead');
  });

  it('disabling an account ends its sessions; an unchanged role keeps them', async () => {
    const s = await signIn('eve@saltbush.test');
    const same = await t.http
      .patch(`/api/users/${t.people.eve.id}`)
      .set({ Cookie: t.people.admin.cookie, Origin: t.url })
      .send({ role: 'viewer' });
    expect(same.status).toBe(200);
    expect((await me(s.cookie!)).status).toBe(200);
    await t.http
      .patch(`/api/users/${t.people.eve.id}`)
      .set({ Cookie: t.people.admin.cookie, Origin: t.url })
      .send({ disabled: true });
    expect((await me(s.cookie!)).status).toBe(401);
    expect((await signIn('eve@saltbush.test')).status).not.toBe(200);
  });

  it('audits failed sign-ins with the address, and a refused burst once per address', async () => {
    // a server of its own with a low limit (its two people's sign-ins count towards it)
    const main = t;
    t = await startTestServer(
      engine,
      { cora: 'analyst', admin: 'admin' },
      { signInPerMinute: LIMIT },
    );
    try {
      await auditedBurst();
    } finally {
      await t.close();
      t = main;
    }
  }, 60_000);

  async function auditedBurst() {
    const ip = '203.0.113.77';
    const wrong = await signIn('cora@saltbush.test', 'not the password', ip);
    expect(wrong.status).toBe(401);
    expect(wrong.cookie).toBeUndefined();
    const failed = await auditOf('auth.sign_in_failed');
    const mine = failed.filter((a) => a.target_id === 'cora@saltbush.test');
    expect(mine.length).toBeGreaterThanOrEqual(1);
    expect(mine.some((a) => a.after.ip !== undefined && a.after.status === 401)).toBe(true);
    // nobody by that name: audited too, under the name tried (no account is revealed)
    const nobody = await signIn('mallory@example.invalid', 'guess', ip);
    expect(nobody.status).toBe(401);
    expect(
      (await auditOf('auth.sign_in_failed')).some((a) => a.target_id === 'mallory@example.invalid'),
    ).toBe(true);
    // brute force from one address: refused after LIMIT a minute (429), audited once
    const statuses: number[] = [];
    for (let i = 0; i < LIMIT + 4; i++)
      statuses.push((await signIn('cora@saltbush.test', `guess ${i}`)).status);
    expect(statuses.filter((s) => s === 429).length).toBeGreaterThanOrEqual(4);
    const limited = await auditOf('auth.sign_in_limited');
    expect(limited).toHaveLength(1);
    expect(limited[0].after).toMatchObject({ limit_per_minute: LIMIT });
  }
});
