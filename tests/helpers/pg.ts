// A fresh, empty database per test server on the PostgreSQL server CI starts
// (SIGHTLINE_TEST_DATABASE_URL points to a database the test user may create databases from).
import { randomUUID } from 'node:crypto';
import pg from 'pg';

export async function freshPgDatabase(): Promise<{ url: string; drop(): Promise<void> }> {
  const admin = process.env.SIGHTLINE_TEST_DATABASE_URL;
  if (!admin) throw new Error('SIGHTLINE_TEST_DATABASE_URL is not set');
  const name = `sightline_test_${randomUUID().replace(/-/g, '').slice(0, 16)}`;
  const client = new pg.Client({ connectionString: admin });
  await client.connect();
  await client.query(`CREATE DATABASE ${name}`);
  await client.end();
  const url = new URL(admin);
  url.pathname = `/${name}`;
  return {
    url: url.toString(),
    async drop() {
      const c = new pg.Client({ connectionString: admin });
      await c.connect();
      await c.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`);
      await c.end();
    },
  };
}
