// Browser-facing defences of the API: cross-site request forgery, the session cookie, the sign-in
// rate limit, closed sign-up, the JSON body limit and the one error shape.
// Sources: interfaces.md "HTTP API" (http-only SameSite cookie, Bearer tokens for robots, errors
// are { error: { code, message, details? } }) and common practice (OWASP CSRF prevention:
// verify the Origin / Sec-Fetch-Site headers, refuse the body types a cross-site form can send
// without a preflight; OWASP authentication: limit sign-in attempts per client; login CSRF).
import { request as httpRequest, type IncomingHttpHeaders } from 'node:http';
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { user } from '../../server/db/schema.js';
import { quietFit } from '../helpers/results.js';
import { ENGINES, PASSWORD, startTestServer, type TestServer } from '../helpers/server.js';

interface Raw {
  status: number;
  headers: IncomingHttpHeaders;
  body: { error?: { code: string; message: string; details?: unknown } } & Record<string, unknown>;
}

/**
 * One request from a chosen loopback address (127.0.0.0/8 all reach the server on 127.0.0.1), so
 * the sign-in limit, which counts per client address, can be shown per address.
 */
function from(
  localAddress: string,
  url: string,
  path: string,
  body: object,
  headers: Record<string, string> = {},
): Promise<Raw> {
  const u = new URL(path, url);
  const data = JSON.stringify(body);
  return new Promise((resolve, reject) => {
    const req = httpRequest(
      {
        host: u.hostname,
        port: u.port,
        path: u.pathname,
        method: 'POST',
        localAddress,
        headers: {
          'content-type': 'application/json',
          'content-length': Buffer.byteLength(data),
          origin: url,
          ...headers,
        },
      },
      (res) => {
        let text = '';
        res.setEncoding('utf8');
        res.on('data', (c: string) => (text += c));
        res.on('end', () =>
          resolve({ status: res.statusCode ?? 0, headers: res.headers, body: JSON.parse(text) }),
        );
      },
    );
    req.on('error', reject);
    req.end(data);
  });
}

/** The API's one error shape: exactly { error: { code, message, details? } }, JSON. */
function expectApiError(
  r: { status: number; headers: IncomingHttpHeaders | Record<string, string>; body: unknown },
  status: number,
  code: string,
) {
  expect(r.status).toBe(status);
  expect(String(r.headers['content-type'])).toMatch(/^application\/json/);
  const body = r.body as { error: Record<string, unknown> };
  expect(Object.keys(body)).toEqual(['error']);
  expect(body.error.code).toBe(code);
  expect(body.error.code).toMatch(/^[a-z][a-z0-9_]*$/);
  expect(typeof body.error.message).toBe('string');
  expect((body.error.message as string).length).toBeGreaterThan(0);
  // no stack traces or internals in messages
  expect(body.error.message).not.toMatch(/\n\s+at |node_modules|\.ts:\d+/);
  for (const k of Object.keys(body.error)) expect(['code', 'message', 'details']).toContain(k);
}

describe.each(ENGINES)('security on %s', (engine) => {
  let t: TestServer;
  let token: string;
  // the limit: 3 sign-ins a minute per address. startTestServer signs ana in from 127.0.0.1;
  // every other sign-in below comes from its own loopback address.
  const LIMIT = 3;
  const cookie = () => t.people.ana.cookie;
  const runCount = async () =>
    (await t.http.get('/api/runs').set({ Cookie: cookie() })).body.total as number;

  beforeAll(async () => {
    t = await startTestServer(engine, { ana: 'analyst' }, { signInPerMinute: LIMIT });
    const made = await t.http
      .post('/api/tokens')
      .set({ Cookie: cookie(), Origin: t.url })
      .send({ name: 'ci' });
    expect(made.status).toBe(201);
    token = made.body.token;
  }, 60_000);
  afterAll(() => t?.close());

  describe('cross-site request forgery (cookie sessions)', () => {
    const push = () => t.http.post('/api/runs').set({ Cookie: cookie() });
    const result = () => ({ result: quietFit('SBP-A') });

    it('refuses a state change from a foreign Origin, and changes nothing', async () => {
      const n = await runCount();
      for (const origin of [
        'https://evil.example',
        'null',
        // same host, other port: a different origin
        t.url.replace(/:\d+$/, ':1'),
        // the scheme is part of the origin
        t.url.replace(/^http:/, 'https:'),
      ]) {
        const r = await push().set('Origin', origin).send(result());
        expectApiError(r, 403, 'bad_origin');
      }
      expect(await runCount()).toBe(n);
    });

    it('refuses a request marked cross-site that carries no Origin', async () => {
      const r = await push().set('Sec-Fetch-Site', 'cross-site').send(result());
      expectApiError(r, 403, 'bad_origin');
    });

    it('refuses form-encoded and text/plain bodies without an Origin (415)', async () => {
      const n = await runCount();
      let r = await push().type('form').send('result=x');
      expectApiError(r, 415, 'unsupported_media_type');
      r = await push().set('Content-Type', 'text/plain').send(JSON.stringify(result()));
      expectApiError(r, 415, 'unsupported_media_type');
      expect(r.body.error.message).toMatch(/application\/json/);
      expect(await runCount()).toBe(n);
    });

    it('covers PATCH and DELETE too, but not reads', async () => {
      const made = await t.http
        .post('/api/tokens')
        .set({ Cookie: cookie(), Origin: t.url })
        .send({ name: 'kept' });
      const r = await t.http
        .delete(`/api/tokens/${made.body.id}`)
        .set({ Cookie: cookie(), Origin: 'https://evil.example' });
      expectApiError(r, 403, 'bad_origin');
      expect(
        (await t.http.get('/api/me').set('Authorization', `Bearer ${made.body.token}`)).status,
      ).toBe(200);
      // a read is answered, with no CORS grant: the foreign page cannot read the answer
      const read = await t.http
        .get('/api/runs')
        .set({ Cookie: cookie(), Origin: 'https://evil.example' });
      expect(read.status).toBe(200);
      expect(read.headers['access-control-allow-origin']).toBeUndefined();
      expect(read.headers['access-control-allow-credentials']).toBeUndefined();
    });

    it('lets same-origin calls and scripts through (the checks are not a blanket refusal)', async () => {
      let r = await push().set('Origin', t.url).send(result());
      expect(r.status, r.text).toBe(201);
      // curl or a script: no Origin, JSON, not marked cross-site
      r = await push().set('Sec-Fetch-Site', 'same-origin').send(result());
      expect(r.status, r.text).toBe(201);
      r = await push().send(result());
      expect(r.status, r.text).toBe(201);
    });

    it('does not apply to Bearer tokens, which a browser never attaches by itself', async () => {
      let r = await t.http
        .post('/api/runs')
        .set({
          Authorization: `Bearer ${token}`,
          Origin: 'https://evil.example',
          'Sec-Fetch-Site': 'cross-site',
        })
        .send(result());
      expect(r.status, r.text).toBe(201);
      // a text body with a token is not refused as a form post: it is simply not JSON
      r = await t.http
        .post('/api/runs')
        .set({ Authorization: `Bearer ${token}`, 'Content-Type': 'text/plain' })
        .send(JSON.stringify(result()));
      expectApiError(r, 400, 'invalid_request');
    });

    it('refuses a cross-site sign-in (login CSRF)', async () => {
      const r = await from(
        '127.0.0.5',
        t.url,
        '/api/auth/sign-in/email',
        { email: t.people.ana.email, password: PASSWORD },
        { origin: 'https://evil.example' },
      );
      expectApiError(r, 403, 'bad_origin');
      expect(r.headers['set-cookie']).toBeUndefined();
    });
  });

  it('sets the session cookie HttpOnly, SameSite=Lax, Path=/, host-only', async () => {
    const r = await from('127.0.0.3', t.url, '/api/auth/sign-in/email', {
      email: t.people.ana.email,
      password: PASSWORD,
    });
    expect(r.status).toBe(200);
    const set = (r.headers['set-cookie'] ?? []).find((c) =>
      c.startsWith('sightline.session_token='),
    );
    expect(set).toBeDefined();
    const attrs = set!
      .split(';')
      .slice(1)
      .map((a) => a.trim().toLowerCase());
    expect(attrs).toContain('httponly');
    expect(attrs).toContain('samesite=lax');
    expect(attrs).toContain('path=/');
    expect(attrs.some((a) => a.startsWith('domain='))).toBe(false);
    // and it works
    const me = await t.http.get('/api/me').set('Cookie', set!.split(';')[0]);
    expect(me.body).toMatchObject({ email: t.people.ana.email, via: 'session' });
    // the session token is in the http-only cookie only, never in a body page scripts can read
    const token = decodeURIComponent(set!.split(';')[0].split('=')[1]).split('.')[0];
    expect(JSON.stringify(r.body)).not.toContain(token);
    expect(r.body.user).toMatchObject({ email: t.people.ana.email });
    const session = await t.http.get('/api/auth/get-session').set('Cookie', set!.split(';')[0]);
    expect(session.status).toBe(200);
    expect(session.body.user).toMatchObject({ email: t.people.ana.email });
    expect(JSON.stringify(session.body)).not.toContain(token);
  });

  it(`limits sign-in to ${LIMIT} attempts a minute per address (429 rate_limited)`, async () => {
    const signIn = (address: string, password: string, headers: Record<string, string> = {}) =>
      from(
        address,
        t.url,
        '/api/auth/sign-in/email',
        { email: t.people.ana.email, password },
        headers,
      );
    for (let i = 0; i < LIMIT; i++)
      expectApiError(
        await signIn('127.0.0.2', 'wrong password!'),
        401,
        'invalid_email_or_password',
      );
    // the next one is refused before the password is even looked at
    const r = await signIn('127.0.0.2', PASSWORD);
    expectApiError(r, 429, 'rate_limited');
    expect(r.headers['set-cookie']).toBeUndefined();
    expect(r.headers['ratelimit-policy']).toBeDefined();
    // a forged X-Forwarded-For does not make a new client (no proxy is trusted by default)
    expectApiError(
      await signIn('127.0.0.2', PASSWORD, { 'x-forwarded-for': '203.0.113.9' }),
      429,
      'rate_limited',
    );
    // another address is not affected
    expect((await signIn('127.0.0.4', PASSWORD)).status).toBe(200);
  });

  it('sign-up is closed: 403, and no account is made', async () => {
    const email = 'walk-in@saltbush.test';
    const r = await from('127.0.0.6', t.url, '/api/auth/sign-up/email', {
      email,
      password: PASSWORD,
      name: 'Walk In',
    });
    expectApiError(r, 403, 'sign_up_disabled');
    const rows = await t.running.services.db.select().from(user).where(eq(user.email, email));
    expect(rows).toEqual([]);
  });

  it('refuses a JSON body over 32 MB with 413 too_large; 1 MB is parsed', async () => {
    const big = `{"result":"${'x'.repeat(33 * 1024 * 1024)}"}`;
    let r = await t.http
      .post('/api/runs')
      .set({ Cookie: cookie(), Origin: t.url, 'Content-Type': 'application/json' })
      .send(big);
    expectApiError(r, 413, 'too_large');
    // well below the limit the body reaches the schema (not the 100 kB default of body parsers)
    const mid = `{"result":"${'x'.repeat(1024 * 1024)}"}`;
    r = await t.http
      .post('/api/runs')
      .set({ Cookie: cookie(), Origin: t.url, 'Content-Type': 'application/json' })
      .send(mid);
    expectApiError(r, 400, 'invalid_request');
  });

  it('answers every kind of error in the one shape', async () => {
    const c = { Cookie: cookie(), Origin: t.url };
    // unknown route, signed out, unknown asset
    expectApiError(await t.http.get('/api/no-such-thing').set(c), 404, 'not_found');
    expectApiError(await t.http.get('/api/runs'), 401, 'unauthenticated');
    expectApiError(await t.http.get('/assets/missing-1234.js'), 404, 'not_found');
    // wrong role, broken JSON, a bad body (with field paths), a bad id
    expectApiError(await t.http.get('/api/audit').set(c), 403, 'forbidden');
    expectApiError(
      await t.http
        .post('/api/runs')
        .set({ ...c, 'Content-Type': 'application/json' })
        .send('{"result": '),
      400,
      'invalid_json',
    );
    const bad = await t.http
      .post('/api/runs')
      .set(c)
      .send({ result: { schema: 'nope' } });
    expectApiError(bad, 400, 'invalid_request');
    expect(bad.body.error.details).toEqual(
      expect.arrayContaining([expect.objectContaining({ path: 'result.schema' })]),
    );
    expectApiError(await t.http.get('/api/runs/not-a-uuid').set(c), 400, 'invalid_request');
    expectApiError(
      await t.http.get('/api/runs/00000000-0000-4000-8000-000000000000').set(c),
      404,
      'not_found',
    );
    // the auth library's own errors are reshaped too
    expectApiError(await t.http.get('/api/auth/no-such-endpoint').set(c), 404, 'not_found');
    const change = await t.http
      .post('/api/auth/change-password')
      .set(c)
      .send({ currentPassword: 'not my password', newPassword: 'another long password' });
    expectApiError(change, 400, 'invalid_password');
  });

  it('sends the usual hardening headers', async () => {
    const r = await t.http.get('/api/health');
    expect(r.headers['x-content-type-options']).toBe('nosniff');
    expect(r.headers['x-powered-by']).toBeUndefined();
    const csp = r.headers['content-security-policy'];
    // strict and explicit (server/app.ts): nothing inline, nothing from elsewhere, no framing
    expect(csp).toMatch(/frame-ancestors 'none'/);
    expect(csp).toMatch(/script-src 'self'(;|$)/);
    expect(csp).toMatch(/script-src-attr 'none'/);
    expect(csp).toMatch(/object-src 'none'/);
    expect(csp).not.toMatch(/unsafe-inline|unsafe-eval/);
    expect(r.headers['x-frame-options']).toBe('DENY');
  });
});
