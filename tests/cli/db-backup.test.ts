// `sightline db backup` / `db restore` for the embedded database: a backup restored into a fresh
// folder holds every table row for row (compared here independently of the restore's own check,
// by opening both databases and reading every table), the same uploads and the same secret; a
// damaged or foreign backup changes nothing; a running server's database is refused.
import { createHash } from 'node:crypto';
import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { PGlite } from '@electric-sql/pglite';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startServer, type RunningServer } from '../../server/start.js';
import { sightline, sightlineAsync, tempDir } from '../helpers/cli.js';
import { quietFit } from '../helpers/results.js';
import { residualCsv } from '../helpers/residual-csv.js';
import { pino } from 'pino';

const { dir, cleanup } = tempDir('sightline-backup-');
const source = join(dir, 'source');
const backup = join(dir, 'nightly.tar.gz');

/** Every table of a PGlite data directory as sorted rows of text, keyed "schema.table". */
async function readEveryTable(dataDir: string): Promise<Record<string, string[]>> {
  const pg = await PGlite.create(join(dataDir, 'db'));
  try {
    const tables = await pg.query<{ s: string; t: string }>(
      `SELECT table_schema AS s, table_name AS t FROM information_schema.tables
       WHERE table_type = 'BASE TABLE' AND table_schema NOT IN ('pg_catalog', 'information_schema')`,
    );
    const out: Record<string, string[]> = {};
    for (const { s, t } of tables.rows) {
      const r = await pg.query<{ row: string }>(`SELECT x::text AS row FROM "${s}"."${t}" x`);
      out[`${s}.${t}`] = r.rows.map((x) => x.row).sort();
    }
    return out;
  } finally {
    await pg.close();
  }
}

const listing = (d: string) => (existsSync(d) ? readdirSync(d).sort() : []);

describe('db backup and restore (embedded database)', () => {
  let server: RunningServer | undefined;

  beforeAll(async () => {
    // a server with people, a pushed and submitted run, an upload and an analysis done
    server = await startServer({
      port: 0,
      host: '127.0.0.1',
      dataDir: source,
      webDir: join(dir, 'no-web'),
      logger: pino({ level: 'silent' }),
      analysisThreads: 1,
    });
    const s = server.services;
    await s.auth.api.createUser({
      body: {
        email: 'ana@saltbush.test',
        password: 'a long test password',
        name: 'Ana',
        role: 'analyst' as 'admin', // better-auth's types know only its default roles
      },
    });
    const signIn = await fetch(`${server.url}/api/auth/sign-in/email`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', origin: server.url },
      body: JSON.stringify({ email: 'ana@saltbush.test', password: 'a long test password' }),
    });
    const cookie = signIn.headers.getSetCookie()[0].split(';')[0];
    const h = { cookie, origin: server.url, 'content-type': 'application/json' };
    const pushed = await fetch(`${server.url}/api/runs`, {
      method: 'POST',
      headers: h,
      body: JSON.stringify({
        result: quietFit('SBP-A'),
        submit: true,
        title: "O'Brien <b>test</b>",
      }),
    });
    expect(pushed.status).toBe(201);
    const form = new FormData();
    form.append('file', new Blob([new Uint8Array(residualCsv())]), 'small.csv');
    const up = await fetch(`${server.url}/api/uploads`, {
      method: 'POST',
      headers: { cookie, origin: server.url },
      body: form,
    });
    expect(up.status, await up.clone().text()).toBe(201);
    await server.close();
    server = undefined;
  }, 120_000);

  afterAll(async () => {
    await server?.close();
    cleanup();
  });

  it('writes one owner-only file and reports what it holds', () => {
    const r = sightline(['db', 'backup', backup, '--data-dir', source, '--json']);
    expect(r.code, r.stderr).toBe(0);
    const out = JSON.parse(r.stdout);
    expect(out.uploads).toBe(1);
    expect(out.tables).toBeGreaterThan(10);
    expect(out.rows).toBeGreaterThan(5);
    expect(readFileSync(backup).subarray(0, 2)).toEqual(Buffer.from([0x1f, 0x8b])); // gzip
    expect(listing(dir).filter((f) => f.includes('partial') || f.includes('staging'))).toEqual([]);
  });

  it('restores into a fresh folder with every table, upload and the secret identical', async () => {
    const fresh = join(dir, 'fresh');
    const r = sightline(['db', 'restore', backup, '--data-dir', fresh]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toMatch(/every one checked against the backup/);
    const [a, b] = [await readEveryTable(source), await readEveryTable(fresh)];
    expect(Object.keys(b).sort()).toEqual(Object.keys(a).sort());
    for (const name of Object.keys(a)) expect(b[name], name).toEqual(a[name]);
    expect(a['public.runs']).toHaveLength(1);
    expect(a['public.uploads']).toHaveLength(1);
    const files = (d: string) =>
      listing(join(d, 'uploads'))
        .filter((f) => f !== 'tmp')
        .map((f) => [
          f,
          createHash('sha256')
            .update(readFileSync(join(d, 'uploads', f)))
            .digest('hex'),
        ]);
    expect(files(fresh)).toEqual(files(source));
    expect(files(fresh)[0][0]).toBe(files(fresh)[0][1]); // stored by hash
    expect(readFileSync(join(fresh, 'auth-secret'), 'utf8')).toBe(
      readFileSync(join(source, 'auth-secret'), 'utf8'),
    );
    // the restored folder serves: the run is there, readable through the API
    const again = await startServer({
      port: 0,
      host: '127.0.0.1',
      dataDir: fresh,
      webDir: join(dir, 'no-web'),
      logger: pino({ level: 'silent' }),
      analysisThreads: 1,
    });
    try {
      const rows = await again.services.db.query.runs.findMany();
      expect(rows.map((x) => x.title)).toEqual(["O'Brien <b>test</b>"]);
    } finally {
      await again.close();
    }
  }, 120_000);

  it('refuses to overwrite a database without --force, and keeps the old one with it', () => {
    const fresh = join(dir, 'fresh');
    const r = sightline(['db', 'restore', backup, '--data-dir', fresh]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/already holds a database/);
    const forced = sightline(['db', 'restore', backup, '--data-dir', fresh, '--force']);
    expect(forced.code, forced.stderr).toBe(0);
    expect(listing(fresh).filter((f) => f.startsWith('db.before-restore-'))).toHaveLength(1);
  }, 60_000);

  it('a truncated, bit-flipped or foreign file changes nothing (exit 2, says what is wrong)', () => {
    const bytes = readFileSync(backup);
    const cases: [string, Buffer, RegExp][] = [
      [
        'truncated.tar.gz',
        bytes.subarray(0, Math.floor(bytes.length / 2)),
        /not a readable backup|damaged|missing/,
      ],
      [
        'flipped.tar.gz',
        Buffer.from(bytes.map((b, i) => (i === bytes.length >> 1 ? b ^ 0x10 : b))),
        /not a readable backup|damaged|missing|SHA-256/,
      ],
      [
        'foreign.tar.gz',
        Buffer.from('this is not a backup at all\n'),
        /not a readable backup|not a Sightline backup/,
      ],
    ];
    for (const [name, content, message] of cases) {
      const file = join(dir, name);
      writeFileSync(file, content);
      const target = join(dir, `target-${name}`);
      const r = sightline(['db', 'restore', file, '--data-dir', target]);
      expect(r.code, `${name}: ${r.stderr}`).toBe(2);
      expect(r.stderr).toMatch(message);
      expect(r.stderr).toContain(name);
      // nothing left behind: no database, no half-restored folder beside it
      expect(listing(target).filter((f) => f !== 'db.lock')).toEqual([]);
      expect(listing(dir).filter((f) => f.includes('restoring'))).toEqual([]);
    }
  }, 120_000);

  it('refuses a data folder a running server holds (exit 3)', async () => {
    server = await startServer({
      port: 0,
      host: '127.0.0.1',
      dataDir: source,
      webDir: join(dir, 'no-web'),
      logger: pino({ level: 'silent' }),
      analysisThreads: 1,
    });
    // (async: a synchronous child would stall this process, and with it the server's lock upkeep)
    const r = await sightlineAsync([
      'db',
      'backup',
      join(dir, 'live.tar.gz'),
      '--data-dir',
      source,
    ]);
    expect(r.code).toBe(3);
    expect(r.stderr).toMatch(/in use by another Sightline process/);
    expect(existsSync(join(dir, 'live.tar.gz'))).toBe(false);
    await server.close();
    server = undefined;
  }, 120_000);

  it('sends PostgreSQL users to pg_dump', () => {
    const r = sightline(['db', 'backup', join(dir, 'pg.tar.gz')], {
      env: { DATABASE_URL: 'postgres://nobody@127.0.0.1:1/none' },
    });
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/pg_dump/);
  });
});
