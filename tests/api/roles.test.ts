// Who may call what: every route of server/routes/*.ts against every role, one test per cell, so
// a failure names the route and the role. Source of the expectations: the roles table of
// interfaces.md "HTTP API" (viewer reads; analyst pushes, uploads, comments, submits own runs and
// keeps own tokens; lead also approves or returns others' runs; admin manages users, roles,
// others' tokens and reads the audit — and does NOT approve). Anonymous callers get 401
// everywhere except /api/health and the sign-in endpoints under /api/auth.
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp } from '../../server/app.js';
import type { Guard, RouteRule } from '../../server/auth/middleware.js';
import { apikey, user } from '../../server/db/schema.js';
import { quietFit } from '../helpers/results.js';
import {
  ENGINES,
  PASSWORD,
  startTestServer,
  type Person,
  type TestRole,
  type TestServer,
} from '../helpers/server.js';

type Caller = 'anonymous' | TestRole;
const CALLERS: Caller[] = ['anonymous', 'viewer', 'analyst', 'lead', 'admin'];

// interfaces.md "HTTP API", roles table: one entry per row
const MAY = {
  /** read runs, plots, baselines; export */
  read: ['viewer', 'analyst', 'lead', 'admin'],
  /** push / upload / create runs, comment */
  contribute: ['analyst', 'lead', 'admin'],
  /** submit own run for review */
  submitOwn: ['analyst', 'lead', 'admin'],
  /** approve or return a run (never one's own) */
  review: ['lead'],
  /** manage users, roles, others' tokens; read audit */
  manage: ['admin'],
  /** own API tokens */
  ownTokens: ['analyst', 'lead', 'admin'],
} as const satisfies Record<string, readonly TestRole[]>;
// Not in the roles table: who curates the pulsar catalogue. server/routes/pulsars.ts gives it to
// leads and admins; pinned here so that changing it is a deliberate decision.
const CURATE = ['lead', 'admin'] as const;

/** The person each role signs in as; ben is "someone else" (an analyst) for others' things. */
const AS: Record<TestRole, string> = {
  viewer: 'guest',
  analyst: 'ana',
  lead: 'lead',
  admin: 'admin',
};

interface Req {
  method: 'get' | 'post' | 'patch' | 'delete';
  path: string;
  body?: object;
  file?: { name: string; bytes: Buffer };
  /** replaces the caller's own session cookie */
  cookie?: string;
}

interface Row {
  route: string;
  /** roles that may call it; 'public': anyone, signed in or not; 'nobody': not served at all */
  may: readonly TestRole[] | 'public' | 'nobody';
  /** status for a caller who may */
  ok: number;
  /** refused for reasons other than who is calling: anonymous callers get the same 403 */
  closed?: boolean;
  /** the error code a signed-in caller who may not gets (default forbidden) */
  deniedCode?: (c: Caller) => string;
  make: (c: Caller, me: Person | undefined) => Promise<Req> | Req;
}

function expected(row: Row, c: Caller): { status: number; code?: string } {
  if (row.may === 'nobody') return { status: 404, code: 'not_found' };
  if (row.may === 'public') return { status: row.ok };
  if (c === 'anonymous' && !row.closed) return { status: 401, code: 'unauthenticated' };
  if (c !== 'anonymous' && row.may.includes(c)) return { status: row.ok };
  return { status: 403, code: row.deniedCode?.(c) ?? 'forbidden' };
}

const TOAS_CSV = Buffer.from(
  [
    'source,mjd,freq_mhz,err_us,residual_us',
    'SBP-A,60310.20,700,0.8,1.9',
    'SBP-A,60310.21,1100,0.5,1.2',
    'SBP-A,60310.22,1500,0.4,0.9',
    'SBP-A,60310.23,2400,0.6,0.7',
  ].join('\n') + '\n',
);

describe.each(ENGINES)('roles × routes on %s', (engine) => {
  let t: TestServer;
  let runId: string;
  let otherRunId: string;
  let uploadId: string;
  let jobId: string;
  let serial = 0;
  const next = () => ++serial;

  const call = (who: string, method: Req['method'], path: string, body?: object) => {
    const r = t.http[method](path).set({ Cookie: t.people[who].cookie, Origin: t.url });
    return body ? r.send(body) : r;
  };
  /** a run of `who` (a contributor), optionally straight into review */
  const newRun = async (who: string, submit = false) => {
    const r = await call(who, 'post', '/api/runs', {
      result: quietFit('SBP-A', 1e-6 * next()),
      submit,
    });
    expect(r.status, r.text).toBe(201);
    return r.body as { id: string; version: number };
  };
  /** a token of `userId`, made by the admin through the API */
  const newToken = async (userId: string) => {
    const r = await call('admin', 'post', '/api/tokens', { name: `t${next()}`, user_id: userId });
    expect(r.status, r.text).toBe(201);
    return r.body as { id: string; token: string };
  };
  const signIn = async (email: string) => {
    const r = await fetch(`${t.url}/api/auth/sign-in/email`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', origin: t.url },
      body: JSON.stringify({ email, password: PASSWORD }),
    });
    const set = r.headers.getSetCookie().find((c) => c.startsWith('sightline.session_token='));
    return { status: r.status, cookie: set?.split(';')[0] };
  };
  const contributorOr = (me: Person | undefined) =>
    me && (MAY.contribute as readonly string[]).includes(me.role) ? me : t.people.ben;
  const whoOf = (p: Person) => Object.keys(t.people).find((k) => t.people[k].id === p.id)!;

  const ROWS: Row[] = [
    // ── open to everyone ──
    {
      route: 'GET /api/health',
      may: 'public',
      ok: 200,
      make: () => ({ method: 'get', path: '/api/health' }),
    },
    {
      route: 'GET /api/auth/get-session',
      may: 'public',
      ok: 200,
      make: () => ({ method: 'get', path: '/api/auth/get-session' }),
    },
    {
      route: 'POST /api/auth/sign-in/email',
      may: 'public',
      ok: 200,
      make: (_c, me) => ({
        method: 'post',
        path: '/api/auth/sign-in/email',
        body: { email: (me ?? t.people.ben).email, password: PASSWORD },
      }),
    },
    {
      // a fresh session of the caller's own, so signing out leaves their test cookie alive
      route: 'POST /api/auth/sign-out',
      may: 'public',
      ok: 200,
      make: async (_c, me) => ({
        method: 'post',
        path: '/api/auth/sign-out',
        body: {},
        cookie: me ? (await signIn(me.email)).cookie : undefined,
      }),
    },
    {
      // accounts are made by an admin (server/auth/auth.ts disableSignUp): refused for all
      route: 'POST /api/auth/sign-up/email',
      may: [],
      closed: true,
      ok: 201,
      deniedCode: () => 'sign_up_disabled',
      make: () => ({
        method: 'post',
        path: '/api/auth/sign-up/email',
        body: { email: `new${next()}@saltbush.test`, password: PASSWORD, name: 'New' },
      }),
    },

    // ── me, users, tokens, audit, mail (server/routes/people.ts) ──
    {
      route: 'GET /api/me',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: '/api/me' }),
    },
    {
      route: 'GET /api/users',
      may: MAY.manage,
      ok: 200,
      make: () => ({ method: 'get', path: '/api/users' }),
    },
    {
      route: 'POST /api/users',
      may: MAY.manage,
      ok: 201,
      make: () => ({
        method: 'post',
        path: '/api/users',
        body: { email: `made${next()}@saltbush.test`, name: 'Made', role: 'viewer' },
      }),
    },
    {
      route: 'PATCH /api/users/:id',
      may: MAY.manage,
      ok: 200,
      make: () => ({
        method: 'patch',
        path: `/api/users/${t.people.tess.id}`,
        body: { role: serial % 2 ? 'viewer' : 'analyst' },
      }),
    },
    {
      route: 'GET /api/tokens',
      may: MAY.ownTokens,
      ok: 200,
      make: () => ({ method: 'get', path: '/api/tokens' }),
    },
    {
      route: 'GET /api/tokens?user=all',
      may: MAY.manage,
      ok: 200,
      make: () => ({ method: 'get', path: '/api/tokens?user=all' }),
    },
    {
      route: 'POST /api/tokens (own)',
      may: MAY.ownTokens,
      ok: 201,
      make: () => ({ method: 'post', path: '/api/tokens', body: { name: `own${next()}` } }),
    },
    {
      route: "POST /api/tokens (someone else's)",
      may: MAY.manage,
      ok: 201,
      make: () => ({
        method: 'post',
        path: '/api/tokens',
        body: { name: `robot${next()}`, user_id: t.people.ben.id },
      }),
    },
    {
      route: 'DELETE /api/tokens/:id (own)',
      may: MAY.ownTokens,
      ok: 204,
      make: async (_c, me) => ({
        method: 'delete',
        path: `/api/tokens/${(await newToken((me ?? t.people.ben).id)).id}`,
      }),
    },
    {
      route: "DELETE /api/tokens/:id (someone else's)",
      may: MAY.manage,
      ok: 204,
      make: async () => ({
        method: 'delete',
        path: `/api/tokens/${(await newToken(t.people.ben.id)).id}`,
      }),
    },
    {
      route: 'GET /api/audit',
      may: MAY.manage,
      ok: 200,
      make: () => ({ method: 'get', path: '/api/audit' }),
    },
    // outgoing mail belongs to the admin's "e-mail settings" (brief.md, who uses it)
    {
      route: 'GET /api/mail',
      may: MAY.manage,
      ok: 200,
      make: () => ({ method: 'get', path: '/api/mail' }),
    },

    // ── pulsars ──
    {
      route: 'GET /api/pulsars',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: '/api/pulsars' }),
    },
    {
      route: 'GET /api/pulsars/:name',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: '/api/pulsars/SBP-A' }),
    },
    {
      route: 'POST /api/pulsars',
      may: CURATE,
      ok: 201,
      make: () => ({ method: 'post', path: '/api/pulsars', body: { name: `SBP-Z${next()}` } }),
    },
    {
      route: 'PATCH /api/pulsars/:name',
      may: CURATE,
      ok: 200,
      make: () => ({
        method: 'patch',
        path: '/api/pulsars/SBP-A',
        body: { notes: `note ${next()}` },
      }),
    },

    // ── runs ──
    {
      route: 'GET /api/runs',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: '/api/runs' }),
    },
    {
      route: 'POST /api/runs',
      may: MAY.contribute,
      ok: 201,
      make: () => ({
        method: 'post',
        path: '/api/runs',
        body: { result: quietFit('SBP-A', 1e-6 * next()) },
      }),
    },
    {
      route: 'GET /api/runs/:id',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: `/api/runs/${runId}` }),
    },
    {
      route: 'GET /api/runs/:id/export',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: `/api/runs/${runId}/export?format=csv` }),
    },
    {
      // the caller's own draft (a viewer cannot have one: ben's stands in)
      route: 'POST /api/runs/:id/submit (own run)',
      may: MAY.submitOwn,
      ok: 200,
      make: async (_c, me) => {
        const run = await newRun(whoOf(contributorOr(me)));
        return {
          method: 'post',
          path: `/api/runs/${run.id}/submit`,
          body: { version: run.version },
        };
      },
    },
    {
      route: 'GET /api/runs/:id/reviews',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: `/api/runs/${runId}/reviews` }),
    },
    {
      route: 'POST /api/runs/:id/reviews (comment)',
      may: MAY.contribute,
      ok: 201,
      make: () => ({
        method: 'post',
        path: `/api/runs/${runId}/reviews`,
        body: { decision: 'comment', comment: `looked at it (${next()})` },
      }),
    },
    {
      route: "POST /api/runs/:id/reviews (approve someone else's run)",
      may: MAY.review,
      ok: 201,
      make: async () => {
        const run = await newRun('ben', true);
        return {
          method: 'post',
          path: `/api/runs/${run.id}/reviews`,
          body: { decision: 'approve', version: run.version },
        };
      },
    },
    {
      route: "POST /api/runs/:id/reviews (return someone else's run)",
      may: MAY.review,
      ok: 201,
      make: async () => {
        const run = await newRun('ben', true);
        return {
          method: 'post',
          path: `/api/runs/${run.id}/reviews`,
          body: { decision: 'return', version: run.version, comment: 'clip visit 2' },
        };
      },
    },
    {
      // "never one's own": nobody approves their own run, a lead included (code own_run)
      route: 'POST /api/runs/:id/reviews (approve own run)',
      may: [],
      ok: 201,
      deniedCode: (c) => (c === 'lead' ? 'own_run' : 'forbidden'),
      make: async (_c, me) => {
        const run = await newRun(whoOf(contributorOr(me)), true);
        return {
          method: 'post',
          path: `/api/runs/${run.id}/reviews`,
          body: { decision: 'approve', version: run.version },
        };
      },
    },

    // ── baselines and compare ──
    {
      route: 'GET /api/activity',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: '/api/activity' }),
    },
    {
      route: 'GET /api/baselines',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: '/api/baselines' }),
    },
    {
      route: 'POST /api/baselines/check',
      may: MAY.read,
      ok: 200,
      make: () => ({
        method: 'post',
        path: '/api/baselines/check',
        body: { results: [quietFit('SBP-A')] },
      }),
    },
    {
      route: 'GET /api/compare',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: `/api/compare?a=${runId}&b=${otherRunId}` }),
    },
    {
      // a receiver's remembered interference channels (server/routes/rfi.ts)
      route: 'GET /api/rfi/:receiver',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: '/api/rfi/mid' }),
    },

    // ── uploads and analyses ──
    {
      route: 'POST /api/uploads',
      may: MAY.contribute,
      ok: 201,
      make: () => ({
        method: 'post',
        path: '/api/uploads',
        file: { name: 'sbp-a.csv', bytes: TOAS_CSV },
      }),
    },
    {
      route: 'GET /api/uploads',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: '/api/uploads' }),
    },
    {
      route: 'GET /api/uploads/:id',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: `/api/uploads/${uploadId}` }),
    },
    {
      route: 'POST /api/analyses',
      may: MAY.contribute,
      ok: 202,
      make: () => ({
        method: 'post',
        path: '/api/analyses',
        body: { kind: 'dm-fit', upload_id: uploadId, params: {} },
      }),
    },
    {
      route: 'GET /api/analyses',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: '/api/analyses' }),
    },
    {
      route: 'GET /api/analyses/:id',
      may: MAY.read,
      ok: 200,
      make: () => ({ method: 'get', path: `/api/analyses/${jobId}` }),
    },

    // ── better-auth's own admin and api-key endpoints: not part of the API ──
    // Users, roles and tokens are managed through /api/users and /api/tokens only, where the roles
    // table is enforced and every change is audited; the library's endpoints would bypass both
    // (an admin impersonating a lead could approve runs; a viewer could make a token).
    {
      route: 'POST /api/auth/api-key/create',
      may: 'nobody',
      ok: 404,
      make: () => ({
        method: 'post',
        path: '/api/auth/api-key/create',
        body: { name: 'side door' },
      }),
    },
    {
      route: 'GET /api/auth/api-key/list',
      may: 'nobody',
      ok: 404,
      make: () => ({ method: 'get', path: '/api/auth/api-key/list' }),
    },
    {
      route: 'POST /api/auth/admin/set-role',
      may: 'nobody',
      ok: 404,
      make: () => ({
        method: 'post',
        path: '/api/auth/admin/set-role',
        body: { userId: t.people.ben.id, role: 'lead' },
      }),
    },
    {
      route: 'POST /api/auth/admin/impersonate-user',
      may: 'nobody',
      ok: 404,
      make: () => ({
        method: 'post',
        path: '/api/auth/admin/impersonate-user',
        body: { userId: t.people.lead.id },
      }),
    },
    {
      route: 'POST /api/auth/admin/ban-user',
      may: 'nobody',
      ok: 404,
      make: () => ({
        method: 'post',
        path: '/api/auth/admin/ban-user',
        body: { userId: t.people.ben.id },
      }),
    },
    {
      route: 'POST /api/auth/update-user',
      may: 'nobody',
      ok: 404,
      make: () => ({ method: 'post', path: '/api/auth/update-user', body: { name: 'Renamed' } }),
    },
  ];

  const CELLS = ROWS.flatMap((row) =>
    CALLERS.map((caller) => {
      const want = expected(row, caller);
      return { name: `${row.route} as ${caller} → ${want.status}`, row, caller, want };
    }),
  );

  beforeAll(async () => {
    t = await startTestServer(engine, {
      guest: 'viewer',
      ana: 'analyst',
      ben: 'analyst',
      lead: 'lead',
      admin: 'admin',
      tess: 'viewer',
      dora: 'analyst',
    });
    expect((await call('lead', 'post', '/api/pulsars', { name: 'SBP-A' })).status).toBe(201);
    runId = (await newRun('ben')).id;
    otherRunId = (await newRun('ben')).id;
    const up = await t.http
      .post('/api/uploads')
      .set({ Cookie: t.people.ben.cookie, Origin: t.url })
      .attach('file', TOAS_CSV, 'sbp-a.csv');
    expect(up.status, up.text).toBe(201);
    uploadId = up.body.id;
    const job = await call('ben', 'post', '/api/analyses', { kind: 'dm-fit', upload_id: uploadId });
    expect(job.status, job.text).toBe(202);
    jobId = job.body.id;
  }, 120_000);
  afterAll(() => t?.close());

  it('every route the app serves starts with a guard, and the matrix has a row for it', () => {
    // walk the live Express app (not the source): each router mounted under /api, each route
    const app = createApp({ webDir: t.dataDir, services: t.running.services });
    const routes: { route: string; rule: RouteRule | undefined }[] = [];
    type Layer = {
      route?: { path: string; methods: Record<string, boolean>; stack: { handle: unknown }[] };
      handle: { stack?: Layer[] };
    };
    const top = (app as unknown as { router: { stack: Layer[] } }).router.stack;
    for (const layer of top)
      for (const sub of layer.handle.stack ?? []) {
        if (!sub.route) continue;
        const first = sub.route.stack[0]?.handle as Partial<Guard> | undefined;
        for (const m of Object.keys(sub.route.methods))
          routes.push({ route: `${m.toUpperCase()} /api${sub.route.path}`, rule: first?.rule });
      }
    expect(routes.length).toBeGreaterThan(30);
    // access denied by default: a route without a guard in front is a failure, named
    expect(routes.filter((r) => !r.rule).map((r) => r.route)).toEqual([]);

    const rows = new Map(ROWS.map((r) => [r.route.replace(/[?(].*$/, '').trim(), r]));
    for (const { route, rule } of routes) {
      const wildcard = route.match(/^(\w+) (.*)\/\{\*rest\}$/);
      if (wildcard) {
        // the auth library's paths: the matrix names each endpoint under it
        const under = [...rows.keys()].filter((k) => k.split(' ')[1].startsWith(wildcard[2] + '/'));
        expect(under.length, `${route}: no row under it`).toBeGreaterThan(0);
        expect(rule).toHaveProperty('public');
        continue;
      }
      const row = rows.get(route);
      expect(row, `${route} has no row in the matrix`).toBeDefined();
      // the guard admits exactly the roles the matrix says may call it
      if (row!.may === 'public') expect(rule, route).toHaveProperty('public');
      else if (row!.may !== 'nobody' && 'roles' in rule!)
        expect([...rule.roles].sort(), route).toEqual(
          expect.arrayContaining([...(row!.may as TestRole[])].sort()),
        );
    }
  });

  it.each(CELLS)('$name', async ({ row, caller, want }) => {
    const me = caller === 'anonymous' ? undefined : t.people[AS[caller]];
    const req = await row.make(caller, me);
    let q = t.http[req.method](req.path).set('Origin', t.url);
    const cookie = req.cookie ?? me?.cookie;
    if (cookie) q = q.set('Cookie', cookie);
    const r = await (req.file
      ? q.attach('file', req.file.bytes, req.file.name)
      : req.body
        ? q.send(req.body)
        : q);
    expect(r.status, `${row.route} as ${caller}: ${r.text.slice(0, 300)}`).toBe(want.status);
    if (want.code) expect(r.body.error.code).toBe(want.code);
    if (want.status >= 400) expect(Object.keys(r.body.error).sort()).toEqual(['code', 'message']);
  });

  it('nothing reached users, roles or tokens through the side doors', async () => {
    const db = t.running.services.db;
    // ben stayed an analyst and was never banned; every token row was made through /api/tokens
    const [ben] = await db.select().from(user).where(eq(user.id, t.people.ben.id));
    expect(ben).toMatchObject({ role: 'analyst', banned: false });
    const tokens = await db.select({ id: apikey.id }).from(apikey);
    const audit = await call('admin', 'get', '/api/audit?action=token.create&page_size=500');
    expect(audit.body.total).toBe(tokens.length);
    expect(tokens.length).toBeGreaterThan(0);
  });

  it('a disabled user loses access at once, by cookie and by token', async () => {
    const dora = t.people.dora;
    const made = await call('dora', 'post', '/api/tokens', { name: 'dora-ci' });
    expect(made.status).toBe(201);
    const bearer = { Authorization: `Bearer ${made.body.token}` };
    const meByCookie = () => call('dora', 'get', '/api/me');
    const meByToken = () => t.http.get('/api/me').set(bearer);
    expect((await meByCookie()).status).toBe(200);
    expect((await meByToken()).body).toMatchObject({ email: dora.email, via: 'token' });

    // an admin cannot lock themselves out
    const self = await call('admin', 'patch', `/api/users/${t.people.admin.id}`, {
      disabled: true,
    });
    expect(self.status).toBe(409);
    expect(self.body.error.code).toBe('self_lockout');

    const off = await call('admin', 'patch', `/api/users/${dora.id}`, { disabled: true });
    expect(off.status).toBe(200);
    expect(off.body).toMatchObject({ id: dora.id, disabled: true });

    let r = await meByCookie();
    expect(r.status).toBe(401);
    expect(r.body.error.code).toBe('unauthenticated');
    r = await meByToken();
    expect(r.status).toBe(401);
    expect(r.body.error.code).toBe('invalid_token');
    r = await t.http
      .post('/api/runs')
      .set(bearer)
      .send({ result: quietFit('SBP-A') });
    expect(r.status).toBe(401);
    // and cannot sign in again
    const again = await signIn(dora.email);
    expect(again.status).toBe(403);
    expect(again.cookie).toBeUndefined();

    const audit = await call('admin', 'get', `/api/audit?target=${dora.id}`);
    expect(audit.body.items.map((a: { action: string }) => a.action)).toContain('user.disable');

    // enabled again: a new sign-in works, and so does the token (it was never revoked)
    expect(
      (await call('admin', 'patch', `/api/users/${dora.id}`, { disabled: false })).status,
    ).toBe(200);
    const back = await signIn(dora.email);
    expect(back.status).toBe(200);
    expect((await t.http.get('/api/me').set({ Cookie: back.cookie! })).status).toBe(200);
    expect((await meByToken()).status).toBe(200);
  });
});
