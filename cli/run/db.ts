// `sightline db backup FILE` and `sightline db restore FILE` for the embedded database.
//
// A backup is one gzipped tar file holding
//   sightline-backup.json   what is inside: software version, time, every table's row count and
//                           SHA-256 fingerprint (server/db/digest.ts), every member's SHA-256
//   db.tar                  PGlite's own dump of its data directory (dumpDataDir)
//   uploads/<sha256>        the uploaded inputs (stored by hash, so names never reach the disk)
//   auth-secret             the session-signing secret, so signed-in people stay signed in
// It is written beside FILE under a temporary name and renamed into place, so FILE is either the
// old file or a complete backup. A restore unpacks into a temporary folder beside DATA_DIR,
// checks every member's hash, loads the dump into a fresh PGlite directory, checks every table's
// fingerprint against the backup's, and only then moves the result into DATA_DIR — a bad or
// truncated backup changes nothing. The server must be stopped (the embedded database belongs to
// one process); for PostgreSQL use pg_dump / pg_restore (README).
import { createHash, randomBytes } from 'node:crypto';
import {
  chmodSync,
  copyFileSync,
  existsSync,
  mkdirSync,
  readdirSync,
  readFileSync,
  renameSync,
  rmSync,
  statSync,
  writeFileSync,
} from 'node:fs';
import path from 'node:path';
import lockfile from 'proper-lockfile';
import * as tar from 'tar';
import { z } from 'zod';
import { openDatabase } from '../../server/db/client.js';
import { digestTables, type TableDigest } from '../../server/db/digest.js';
import { SOFTWARE } from '../common.js';
import { CliError, EXIT, usageError } from '../errors.js';

export const BACKUP_SCHEMA = 'sightline/backup@1';
const MANIFEST = 'sightline-backup.json';

const manifestSchema = z.object({
  schema: z.literal(BACKUP_SCHEMA),
  created_utc: z.string(),
  software: z.object({ name: z.string(), version: z.string() }),
  engine: z.literal('pglite'),
  tables: z.record(z.string(), z.object({ rows: z.number().int().min(0), sha256: z.string() })),
  files: z.array(
    z.object({
      path: z.string().regex(/^(db\.tar|auth-secret|uploads\/[0-9a-f]{64})$/),
      bytes: z.number().int().min(0),
      sha256: z.string().regex(/^[0-9a-f]{64}$/),
    }),
  ),
});
export type BackupManifest = z.infer<typeof manifestSchema>;

export interface DbOptions {
  dataDir: string;
  force?: boolean;
  quiet?: boolean;
  json?: boolean;
}

const sha256 = (b: Uint8Array) => createHash('sha256').update(b).digest('hex');
const note = (o: DbOptions, line: string) => {
  if (!o.quiet) process.stderr.write(line + '\n');
};

function embeddedOnly(env = process.env): void {
  if (env.DATABASE_URL)
    throw usageError(
      'db backup/restore is for the embedded database; with DATABASE_URL use pg_dump and pg_restore (see README "Backups")',
    );
}

/** A sibling temporary folder (same file system, so the final rename is atomic). */
function siblingTemp(target: string, tag: string): string {
  const dir = `${target}.${tag}-${randomBytes(4).toString('hex')}`;
  mkdirSync(dir, { recursive: true });
  return dir;
}

function summary(m: BackupManifest) {
  const tables = Object.keys(m.tables).length;
  const rows = Object.values(m.tables).reduce((a, t) => a + t.rows, 0);
  const uploads = m.files.filter((f) => f.path.startsWith('uploads/')).length;
  return { tables, rows, uploads };
}

export async function runDbBackup(file: string, o: DbOptions): Promise<void> {
  embeddedOnly();
  const dataDir = path.resolve(o.dataDir);
  const out = path.resolve(file);
  if (!existsSync(path.join(dataDir, 'db')))
    throw usageError(`${dataDir}: no embedded database here (no db/ folder)`);
  if (existsSync(out) && !o.force)
    throw usageError(`${out} exists; give another name or --force to replace it`);
  if (!existsSync(path.dirname(out)))
    throw usageError(`${path.dirname(out)}: no such folder for the backup`);

  let database;
  try {
    database = await openDatabase({ dataDir });
  } catch (e) {
    throw new CliError(`${dataDir}: ${(e as Error).message}`, EXIT.io);
  }
  const stage = siblingTemp(out, 'staging');
  const partial = `${out}.partial-${randomBytes(4).toString('hex')}`;
  try {
    const tables = await digestTables(database.executeSql);
    const dump = new Uint8Array(await (await database.dumpDataDir!()).arrayBuffer());
    await database.close();
    database = undefined;

    const files: BackupManifest['files'] = [];
    const put = (rel: string, bytes: Uint8Array) => {
      const to = path.join(stage, rel);
      mkdirSync(path.dirname(to), { recursive: true });
      writeFileSync(to, bytes);
      files.push({ path: rel, bytes: bytes.length, sha256: sha256(bytes) });
    };
    put('db.tar', dump);
    const uploadsDir = path.join(dataDir, 'uploads');
    if (existsSync(uploadsDir))
      for (const name of readdirSync(uploadsDir).sort()) {
        if (!/^[0-9a-f]{64}$/.test(name)) continue; // multer's tmp/ and anything not stored by hash
        put(`uploads/${name}`, readFileSync(path.join(uploadsDir, name)));
      }
    const secret = path.join(dataDir, 'auth-secret');
    if (existsSync(secret)) put('auth-secret', readFileSync(secret));
    const manifest: BackupManifest = {
      schema: BACKUP_SCHEMA,
      created_utc: new Date().toISOString(),
      software: { name: 'sightline', version: SOFTWARE.version },
      engine: 'pglite',
      tables,
      files,
    };
    writeFileSync(path.join(stage, MANIFEST), JSON.stringify(manifest, null, 2) + '\n');
    await tar.c({ gzip: true, file: partial, cwd: stage, portable: true }, [
      MANIFEST,
      ...files.map((f) => f.path),
    ]);
    // the backup holds password hashes and the session secret: owner-only, like the data dir
    chmodSync(partial, 0o600);
    renameSync(partial, out);
    const s = summary(manifest);
    if (o.json)
      process.stdout.write(
        JSON.stringify({ file: out, bytes: statSync(out).size, ...s, tables_detail: tables }) +
          '\n',
      );
    note(
      o,
      `backed up ${s.tables} tables (${s.rows} rows) and ${s.uploads} upload(s) from ${dataDir} to ${out} (${statSync(out).size} bytes)`,
    );
  } finally {
    await database?.close();
    rmSync(stage, { recursive: true, force: true });
    rmSync(partial, { force: true });
  }
}

/** Unpack and check a backup in `into`; returns its manifest. Throws a usage error naming what is wrong. */
async function unpackChecked(file: string, into: string): Promise<BackupManifest> {
  if (!existsSync(file)) throw usageError(`${file}: no such file`);
  try {
    await tar.x({
      file,
      cwd: into,
      strict: true,
      // only the members a backup holds; links, devices and odd paths are refused
      filter: (p, entry) =>
        'type' in entry &&
        (entry.type === 'File' || entry.type === 'Directory') &&
        /^(sightline-backup\.json|db\.tar|auth-secret|uploads\/?|uploads\/[0-9a-f]{64})$/.test(p),
    });
  } catch (e) {
    throw usageError(`${file}: not a readable backup (${(e as Error).message})`);
  }
  const manifestPath = path.join(into, MANIFEST);
  if (!existsSync(manifestPath))
    throw usageError(`${file}: not a Sightline backup (no ${MANIFEST})`);
  let manifest: BackupManifest;
  try {
    manifest = manifestSchema.parse(JSON.parse(readFileSync(manifestPath, 'utf8')));
  } catch (e) {
    const detail =
      e instanceof z.ZodError
        ? e.issues.map((i) => `${i.path.join('.') || '(top)'}: ${i.message}`).join('; ')
        : (e as Error).message;
    throw usageError(`${file}: ${MANIFEST} is not a valid backup manifest (${detail})`);
  }
  if (!manifest.files.some((f) => f.path === 'db.tar'))
    throw usageError(`${file}: ${MANIFEST} lists no db.tar`);
  for (const f of manifest.files) {
    const p = path.join(into, f.path);
    if (!existsSync(p)) throw usageError(`${file}: ${f.path} is missing from the archive`);
    const bytes = readFileSync(p);
    if (bytes.length !== f.bytes || sha256(bytes) !== f.sha256)
      throw usageError(`${file}: ${f.path} does not match its recorded SHA-256 (damaged backup)`);
  }
  return manifest;
}

function compareDigests(
  want: Record<string, TableDigest>,
  got: Record<string, TableDigest>,
): string[] {
  const names = [...new Set([...Object.keys(want), ...Object.keys(got)])].sort();
  return names.flatMap((n) => {
    const a = want[n];
    const b = got[n];
    if (!a) return [`${n}: not in the backup`];
    if (!b) return [`${n}: missing after the restore`];
    if (a.rows !== b.rows) return [`${n}: ${b.rows} rows, the backup had ${a.rows}`];
    if (a.sha256 !== b.sha256) return [`${n}: rows differ from the backup's`];
    return [];
  });
}

export async function runDbRestore(file: string, o: DbOptions): Promise<void> {
  embeddedOnly();
  const dataDir = path.resolve(o.dataDir);
  const src = path.resolve(file);
  const dbDir = path.join(dataDir, 'db');
  const had = existsSync(dbDir) && readdirSync(dbDir).length > 0;
  if (had && !o.force)
    throw usageError(
      `${dataDir} already holds a database; restore into a fresh folder, or --force to replace it (the old one is kept beside it)`,
    );
  mkdirSync(dataDir, { recursive: true });
  // the same lock the server takes: no server may hold this data directory while we replace it
  let release: (() => Promise<void>) | undefined;
  try {
    release = await lockfile.lock(dbDir, {
      lockfilePath: `${dbDir}.lock`,
      realpath: false,
      stale: 5_000,
      update: 1_000,
    });
  } catch (e) {
    throw new CliError(
      `${dbDir} is in use by another Sightline process (${(e as Error).message}); stop it first`,
      EXIT.io,
    );
  }
  const work = siblingTemp(dataDir, 'restoring');
  try {
    const unpacked = path.join(work, 'backup');
    mkdirSync(unpacked);
    const manifest = await unpackChecked(src, unpacked);
    // load PGlite's dump into a fresh directory and check it holds exactly what was backed up
    const { PGlite } = await import('@electric-sql/pglite');
    const freshDb = path.join(work, 'db');
    const client = await PGlite.create(freshDb, {
      loadDataDir: new Blob([readFileSync(path.join(unpacked, 'db.tar'))]),
    });
    let problems: string[];
    try {
      problems = compareDigests(manifest.tables, await digestTables((t, v) => client.query(t, v)));
    } finally {
      await client.close();
    }
    if (problems.length)
      throw usageError(
        `${src}: the restored database differs from the backup: ${problems.join('; ')}`,
      );

    // everything checked: move into place, keeping what was there beside it
    const stamp = new Date().toISOString().replace(/[:.]/g, '-');
    const keepAside = (p: string) => {
      if (existsSync(p)) renameSync(p, `${p}.before-restore-${stamp}`);
    };
    keepAside(dbDir);
    renameSync(freshDb, dbDir);
    const uploads = path.join(dataDir, 'uploads');
    const restoredUploads = manifest.files.filter((f) => f.path.startsWith('uploads/'));
    if (restoredUploads.length || existsSync(uploads)) {
      keepAside(uploads);
      mkdirSync(uploads, { recursive: true });
      for (const f of restoredUploads)
        copyFileSync(path.join(unpacked, f.path), path.join(dataDir, f.path));
    }
    if (manifest.files.some((f) => f.path === 'auth-secret')) {
      keepAside(path.join(dataDir, 'auth-secret'));
      copyFileSync(path.join(unpacked, 'auth-secret'), path.join(dataDir, 'auth-secret'));
      chmodSync(path.join(dataDir, 'auth-secret'), 0o600);
    }
    const s = summary(manifest);
    if (o.json)
      process.stdout.write(
        JSON.stringify({ file: src, data_dir: dataDir, created_utc: manifest.created_utc, ...s }) +
          '\n',
      );
    note(
      o,
      `restored ${s.tables} tables (${s.rows} rows, every one checked against the backup) and ${s.uploads} upload(s) from ${src} (made ${manifest.created_utc}) into ${dataDir}${had ? '; the previous database is kept beside it as db.before-restore-' + stamp : ''}`,
    );
  } finally {
    rmSync(work, { recursive: true, force: true });
    await release?.();
  }
}
