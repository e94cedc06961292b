// One database handle for the whole server: embedded PostgreSQL (PGlite) in a data directory by
// default, or a PostgreSQL server through node-postgres when DATABASE_URL is set. Both speak the
// same SQL, run the same migrations (drizzle/) and expose the same Drizzle API.
import { mkdirSync } from 'node:fs';
import path from 'node:path';
import lockfile from 'proper-lockfile';
import type { PgDatabase, PgQueryResultHKT } from 'drizzle-orm/pg-core';
import { packageRoot } from '../paths.js';
import * as schema from './schema.js';

export type Db = PgDatabase<PgQueryResultHKT, typeof schema>;

export interface Database {
  db: Db;
  /** 'pglite' (embedded, single process) or 'postgres' (a server) */
  engine: 'pglite' | 'postgres';
  /** where the data lives: a folder for PGlite, the URL without its password for PostgreSQL */
  location: string;
  migrate(): Promise<void>;
  /**
   * Plain SQL on the same connection(s), for packages that bring their own SQL (the job queue):
   * parameters go through the extended protocol; text without parameters may hold several
   * statements and answers with the last one's rows.
   */
  executeSql(text: string, values?: unknown[]): Promise<{ rows: unknown[] }>;
  /** the embedded database's own dump of its data directory (a tar file); PGlite only */
  dumpDataDir?: () => Promise<Blob>;
  close(): Promise<void>;
}

export interface DatabaseOptions {
  /** PostgreSQL connection string; when absent the embedded database in `dataDir` is used */
  url?: string;
  /** folder holding the embedded database (`<dataDir>/db`) and the uploads */
  dataDir: string;
  migrationsFolder?: string;
}

/** drizzle/ sits at the package root. */
export const defaultMigrationsFolder = () => path.join(packageRoot(), 'drizzle');

function redact(url: string): string {
  try {
    const u = new URL(url);
    if (u.password) u.password = '***';
    return u.toString();
  } catch {
    return 'postgres://(unparsable URL)';
  }
}

export async function openDatabase(options: DatabaseOptions): Promise<Database> {
  const migrationsFolder = options.migrationsFolder ?? defaultMigrationsFolder();
  if (options.url) {
    const { default: pg } = await import('pg');
    const { drizzle } = await import('drizzle-orm/node-postgres');
    const { migrate } = await import('drizzle-orm/node-postgres/migrator');
    const pool = new pg.Pool({ connectionString: options.url, max: 10 });
    // fail now, with a clear message, rather than on the first request
    const probe = await pool.connect();
    probe.release();
    const db = drizzle({ client: pool, schema }) as unknown as Db;
    return {
      db,
      engine: 'postgres',
      location: redact(options.url),
      migrate: () => migrate(db as never, { migrationsFolder }),
      executeSql: (text, values) => pool.query(text, values),
      close: () => pool.end(),
    };
  }
  const { PGlite } = await import('@electric-sql/pglite');
  const { drizzle } = await import('drizzle-orm/pglite');
  const { migrate } = await import('drizzle-orm/pglite/migrator');
  const folder = path.resolve(options.dataDir, 'db');
  mkdirSync(folder, { recursive: true });
  // The embedded database belongs to one process at a time. The lock is refreshed every second
  // and counts as stale 5 s after its holder died, so a restart after a crash waits briefly
  // instead of failing.
  let release: () => Promise<void>;
  try {
    release = await lockfile.lock(folder, {
      lockfilePath: `${folder}.lock`,
      stale: 5_000,
      update: 1_000,
      retries: { retries: 12, minTimeout: 500, maxTimeout: 1_000 },
    });
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'ELOCKED')
      throw new Error(
        `the database in ${folder} is in use by another Sightline process (a server or \`demo seed\`); stop it first`,
        { cause: e },
      );
    throw e;
  }
  try {
    const client = await PGlite.create(folder);
    const db = drizzle({ client, schema }) as unknown as Db;
    return {
      db,
      engine: 'pglite',
      location: folder,
      migrate: () => migrate(db as never, { migrationsFolder }),
      dumpDataDir: () => client.dumpDataDir('none'),
      async executeSql(text, values) {
        if (values?.length) return client.query(text, values);
        const results = await client.exec(text);
        return results[results.length - 1] ?? { rows: [] };
      },
      close: async () => {
        await client.close();
        await release();
      },
    };
  } catch (e) {
    await release();
    throw e;
  }
}
