// `sightline demo seed`: prepare the review server's database for the fictional demo — the
// team's accounts (demo-scenario handout), the pulsar catalogue and robot tokens for pushing —
// before the server starts (the embedded database has one process at a time). Idempotent: a
// second run keeps what is there and prints the same sign-ins.
import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { eq } from 'drizzle-orm';
import { pino } from 'pino';
import { pulsars, user } from '../../server/db/schema.js';
import { randomPassword } from '../../server/routes/people.js';
import { createServices } from '../../server/services.js';
import { usageError } from '../errors.js';
import { writeFileAtomic } from '../io/output.js';

export interface SeedOptions {
  dataDir: string;
  catalogue: string;
  quiet?: boolean;
}

export const DEMO_TEAM = [
  { email: 'admin@saltbush.test', name: 'Site Admin', role: 'admin' },
  { email: 'lead@saltbush.test', name: 'Timing Lead', role: 'lead' },
  { email: 'ana@saltbush.test', name: 'Ana', role: 'analyst' },
  { email: 'ben@saltbush.test', name: 'Ben', role: 'analyst' },
  { email: 'guest@saltbush.test', name: 'Guest', role: 'viewer' },
] as const;

/** Which accounts get a robot token, so the start script can push through the real API. */
const TOKEN_HOLDERS = ['ana@saltbush.test', 'ben@saltbush.test', 'lead@saltbush.test'];

export interface SignIns {
  password: string;
  accounts: { email: string; role: string }[];
  tokens: Record<string, string>;
}

interface CatalogueEntry {
  source: string;
  period_s?: number;
  dm?: number;
  ra_deg?: number;
  dec_deg?: number;
  is_reference?: boolean;
}

export async function runDemoSeed(o: SeedOptions): Promise<void> {
  let catalogue: { pulsars: CatalogueEntry[] };
  try {
    catalogue = JSON.parse(readFileSync(o.catalogue, 'utf8')) as { pulsars: CatalogueEntry[] };
    if (!Array.isArray(catalogue.pulsars)) throw new Error('no "pulsars" array');
  } catch (e) {
    throw usageError(`${o.catalogue}: not a demo catalogue (${(e as Error).message})`);
  }
  const file = path.join(o.dataDir, 'demo-sign-ins.json');
  const known: SignIns | undefined = existsSync(file)
    ? (JSON.parse(readFileSync(file, 'utf8')) as SignIns)
    : undefined;
  const s = await createServices({
    dataDir: o.dataDir,
    databaseUrl: process.env.DATABASE_URL || undefined,
    publicUrl: 'http://127.0.0.1',
    logger: pino({ level: 'warn' }),
  });
  try {
    const password = known?.password ?? randomPassword();
    for (const m of DEMO_TEAM) {
      const [exists] = await s.db.select({ id: user.id }).from(user).where(eq(user.email, m.email));
      if (!exists)
        await s.auth.api.createUser({
          body: { email: m.email, password, name: m.name, role: m.role as 'admin' },
        });
    }
    for (const p of catalogue.pulsars)
      await s.db
        .insert(pulsars)
        .values({
          name: p.source,
          periodS: p.period_s ?? null,
          dmRef: p.dm ?? null,
          raDeg: p.ra_deg ?? null,
          decDeg: p.dec_deg ?? null,
          isReference: p.is_reference === true,
          notes: 'fictional demo pulsar',
        })
        .onConflictDoNothing({ target: pulsars.name });
    const tokens: Record<string, string> = { ...(known?.tokens ?? {}) };
    for (const email of TOKEN_HOLDERS) {
      if (tokens[email]) continue;
      const [u] = await s.db.select({ id: user.id }).from(user).where(eq(user.email, email));
      const made = await s.auth.api.createApiKey({ body: { name: 'demo pipeline', userId: u.id } });
      tokens[email] = made.key;
    }
    const out: SignIns = {
      password,
      accounts: DEMO_TEAM.map((m) => ({ email: m.email, role: m.role })),
      tokens,
    };
    await writeFileAtomic(file, JSON.stringify(out, null, 2) + '\n');
    if (!o.quiet) process.stdout.write(`${file}\n`);
  } finally {
    await s.close();
  }
}
