// Nothing acknowledged is lost: pushes run against a real server process, which is killed hard
// (SIGKILL) in the middle of the batch; after a restart on the same data, every push that got
// 201 is there, complete. Runs on the embedded database and, in CI, on PostgreSQL.
import { afterAll, describe, expect, it } from 'vitest';
import { spawn, type ChildProcess } from 'node:child_process';
import { join } from 'node:path';
import { BIN, ROOT, tempDir } from '../helpers/cli.js';
import { freshPgDatabase } from '../helpers/pg.js';
import { quietFit } from '../helpers/results.js';
import { ENGINES } from '../helpers/server.js';

interface Started {
  child: ChildProcess;
  url: string;
  stderr: () => string;
}

function serve(
  dataDir: string,
  env: Record<string, string>,
  extra: string[] = [],
): Promise<Started> {
  return new Promise((resolve, reject) => {
    const child = spawn(
      process.execPath,
      [BIN, 'serve', '--port', '0', '--data-dir', dataDir, ...extra],
      {
        cwd: ROOT,
        env: { ...process.env, LOG_LEVEL: 'warn', ...env },
        stdio: ['ignore', 'pipe', 'pipe'],
      },
    );
    let out = '';
    let err = '';
    child.stderr!.setEncoding('utf8').on('data', (c: string) => (err += c));
    child.stdout!.setEncoding('utf8').on('data', (c: string) => {
      out += c;
      const m = /review app on (http:\/\/[\d.:]+)\//.exec(out);
      if (m) resolve({ child, url: m[1], stderr: () => err });
    });
    child.on('exit', (code) => reject(new Error(`server exited (${code}): ${err}`)));
  });
}

const killHard = (c: ChildProcess) =>
  new Promise<void>((resolve) => {
    c.removeAllListeners('exit');
    c.once('exit', () => resolve());
    c.kill('SIGKILL');
  });

describe.each(ENGINES)('restart after a hard kill on %s', (engine) => {
  const { dir, cleanup } = tempDir('sightline-kill-');
  let drop: (() => Promise<void>) | undefined;
  let server: Started | undefined;
  afterAll(async () => {
    if (server) await killHard(server.child);
    await drop?.();
    cleanup();
  });

  it('keeps every acknowledged push', async () => {
    const env: Record<string, string> = {};
    if (engine === 'postgres') {
      const pg = await freshPgDatabase();
      env.DATABASE_URL = pg.url;
      drop = pg.drop;
    }
    const dataDir = join(dir, 'data');
    server = await serve(dataDir, env, ['--create-admin', 'admin@saltbush.test']);
    const password = /with password (\S+)/.exec(server.stderr())?.[1];
    expect(password).toBeDefined();
    const signIn = await fetch(`${server.url}/api/auth/sign-in/email`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ email: 'admin@saltbush.test', password }),
    });
    const cookie = signIn.headers.getSetCookie()[0].split(';')[0];
    const tokenRes = await fetch(`${server.url}/api/tokens`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', cookie },
      body: JSON.stringify({ name: 'pipeline' }),
    });
    const { token } = (await tokenRes.json()) as { token: string };

    // 6 pushers in parallel; the server dies after the 12th acknowledgement
    const acked: { id: string; shift: number }[] = [];
    let killed: Promise<void> | undefined;
    let next = 0;
    const url = server.url;
    const victim = server.child;
    const pusher = async () => {
      while (next < 400 && !killed) {
        const shift = next++ * 1e-6;
        try {
          const r = await fetch(`${url}/api/runs`, {
            method: 'POST',
            headers: { 'content-type': 'application/json', authorization: `Bearer ${token}` },
            body: JSON.stringify({ result: quietFit('SBP-B', shift, 40) }),
          });
          if (r.status === 201) {
            acked.push({ id: ((await r.json()) as { id: string }).id, shift });
            if (acked.length === 12) killed = killHard(victim);
          }
        } catch {
          // connection cut by the kill: not acknowledged, so not promised
        }
      }
    };
    await Promise.all(Array.from({ length: 6 }, pusher));
    await killed;
    expect(acked.length).toBeGreaterThanOrEqual(12);

    server = await serve(dataDir, env);
    const check = await fetch(`${server.url}/api/auth/sign-in/email`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ email: 'admin@saltbush.test', password }),
    });
    const cookie2 = check.headers.getSetCookie()[0].split(';')[0];
    for (const a of acked) {
      const r = await fetch(`${server.url}/api/runs/${a.id}`, { headers: { cookie: cookie2 } });
      expect(r.status, a.id).toBe(200);
      const run = (await r.json()) as { result: unknown };
      expect(run.result).toEqual(quietFit('SBP-B', a.shift, 40));
    }
    // the token survived the restart too
    const list = await fetch(`${server.url}/api/runs?page_size=1`, {
      headers: { authorization: `Bearer ${token}` },
    });
    expect(((await list.json()) as { total: number }).total).toBeGreaterThanOrEqual(acked.length);
  }, 120_000);
});
