import { eq } from 'drizzle-orm';
import { configFromEnv } from '../../server/config.js';
import { user } from '../../server/db/schema.js';
import { randomPassword } from '../../server/routes/people.js';
import { startServer } from '../../server/start.js';
import { SOFTWARE } from '../common.js';
import { CliError, EXIT } from '../errors.js';

export interface ServeOptions {
  port?: number;
  host?: string;
  dataDir?: string;
  createAdmin?: string;
}

/** `sightline serve`: API + built web app until SIGINT/SIGTERM. */
export async function runServe(o: ServeOptions): Promise<void> {
  const config = configFromEnv({ port: o.port, host: o.host, dataDir: o.dataDir });
  let running;
  try {
    running = await startServer(config);
  } catch (e) {
    const err = e as NodeJS.ErrnoException;
    if (err.code === 'EADDRINUSE')
      throw new CliError(`port ${config.port} on ${config.host} is already in use`, EXIT.io);
    if (/lock|already in use|database files are incompatible/i.test(err.message ?? ''))
      throw new CliError(`${config.dataDir}: ${err.message}`, EXIT.io);
    throw new CliError(`the server could not start: ${err.message}`, EXIT.io);
  }
  const s = running.services;
  if (o.createAdmin) {
    const email = o.createAdmin.toLowerCase();
    const [exists] = await s.db.select({ id: user.id }).from(user).where(eq(user.email, email));
    if (exists) process.stderr.write(`admin account ${email} already exists; left as it is\n`);
    else {
      const password = randomPassword();
      await s.auth.api.createUser({
        body: { email, password, name: 'Administrator', role: 'admin' },
      });
      process.stderr.write(
        `created admin ${email} with password ${password}\n(shown once: sign in and change it)\n`,
      );
    }
  }
  process.stdout.write(
    `sightline ${SOFTWARE.version} review app on ${running.url}/ (database: ${s.database.engine} ${s.database.location}; mail: ${s.mailer.target})\n`,
  );
  await new Promise<void>((resolve) => {
    const stop = () => void running.close().then(resolve);
    process.once('SIGINT', stop);
    process.once('SIGTERM', stop);
  });
}
