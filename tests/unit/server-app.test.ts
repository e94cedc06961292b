import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { startTestServer, type TestServer } from '../helpers/server.js';

let t: TestServer;

beforeAll(async () => {
  t = await startTestServer('pglite', {});
  const web = join(t.dataDir, '..', 'web');
  mkdirSync(join(web, 'assets'), { recursive: true });
  writeFileSync(join(web, 'assets', 'app.js'), 'console.log(1)');
}, 60_000);
afterAll(() => t?.close());

describe('server entry point', () => {
  it('answers /api/health with the software version and the database engine', async () => {
    const r = await fetch(`${t.url}/api/health`);
    expect(r.status).toBe(200);
    expect(await r.json()).toMatchObject({
      status: 'ok',
      software: { name: 'sightline' },
      database: { engine: 'pglite', status: 'ok' },
    });
  });

  it('unknown API routes and missing assets are JSON 404s', async () => {
    for (const path of ['/api/nope', '/assets/missing.js']) {
      const r = await fetch(t.url + path);
      expect(r.status, path).toBe(404);
      expect(((await r.json()) as { error: { code: string } }).error.code).toBe('not_found');
    }
  });

  it('serves the web app and falls back to it for client-side routes', async () => {
    expect(await (await fetch(`${t.url}/assets/app.js`)).text()).toBe('console.log(1)');
    const page = await fetch(`${t.url}/runs/42`);
    expect(page.status).toBe(200);
    expect(await page.text()).toMatch(/<title>Sightline<\/title>/);
  });

  it('sends security headers (helmet) and a request id', async () => {
    const r = await fetch(`${t.url}/api/health`);
    expect(r.headers.get('x-content-type-options')).toBe('nosniff');
    expect(r.headers.get('content-security-policy')).toMatch(/default-src 'self'/);
    expect(r.headers.get('x-request-id')).toMatch(/^[0-9a-f-]{36}$/);
  });
});
