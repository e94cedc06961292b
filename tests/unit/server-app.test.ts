import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { createApp } from '../../server/app.js';
import { tempDir } from '../helpers/cli.js';

const { dir, cleanup } = tempDir();
let server: Server;
let base: string;

beforeAll(async () => {
  mkdirSync(join(dir, 'assets'));
  writeFileSync(join(dir, 'index.html'), '<!doctype html><title>Sightline</title>');
  writeFileSync(join(dir, 'assets', 'app.js'), 'console.log(1)');
  server = createApp({ webDir: dir }).listen(0, '127.0.0.1');
  await new Promise((resolve) => server.once('listening', resolve));
  base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
});
afterAll(() => {
  server.close();
  cleanup();
});

describe('server entry point', () => {
  it('answers /api/health with the software version', async () => {
    const r = await fetch(`${base}/api/health`);
    expect(r.status).toBe(200);
    expect(await r.json()).toMatchObject({ status: 'ok', software: { name: 'sightline' } });
  });

  it('unknown API routes and missing assets are JSON 404s', async () => {
    for (const path of ['/api/nope', '/assets/missing.js']) {
      const r = await fetch(base + path);
      expect(r.status, path).toBe(404);
      expect(((await r.json()) as { error: { code: string } }).error.code).toBe('not_found');
    }
  });

  it('serves the web app and falls back to it for client-side routes', async () => {
    expect(await (await fetch(`${base}/assets/app.js`)).text()).toBe('console.log(1)');
    const page = await fetch(`${base}/runs/42`);
    expect(page.status).toBe(200);
    expect(await page.text()).toMatch(/<title>Sightline<\/title>/);
  });
});
