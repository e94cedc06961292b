// `node dist/server/main.js` — the review server on its own (the CLI's `sightline serve` does
// the same). Options: --port, --host, --data-dir; environment: DATABASE_URL, SMTP_URL,
// SIGHTLINE_PUBLIC_URL, SIGHTLINE_TRUSTED_ORIGINS, SIGHTLINE_AUTH_SECRET, LOG_LEVEL.
import { parseArgs } from 'node:util';
import { SOFTWARE } from './software.js';
import { startServer } from './start.js';

const DEFAULT_PORT = 5180;

function fail(message: string, code: number): never {
  process.stderr.write(`sightline server: ${message}\n`);
  process.exit(code);
}

function parsePort(text: string | undefined): number {
  if (text === undefined || text === '') return DEFAULT_PORT;
  const port = Number(text);
  if (!Number.isInteger(port) || port < 0 || port > 65535)
    fail(`port "${text}" is not an integer from 0 to 65535`, 2);
  return port;
}

let args;
try {
  args = parseArgs({
    options: {
      port: { type: 'string' },
      host: { type: 'string' },
      'data-dir': { type: 'string' },
    },
  }).values;
} catch (e) {
  fail((e as Error).message, 2);
}

try {
  const running = await startServer({
    port: parsePort(args.port ?? process.env.PORT),
    host: args.host ?? process.env.HOST ?? '127.0.0.1',
    dataDir: args['data-dir'] ?? process.env.SIGHTLINE_DATA_DIR ?? 'data',
    databaseUrl: process.env.DATABASE_URL || undefined,
    smtpUrl: process.env.SMTP_URL || undefined,
    publicUrl: process.env.SIGHTLINE_PUBLIC_URL || undefined,
    trustedOrigins: process.env.SIGHTLINE_TRUSTED_ORIGINS?.split(',').filter(Boolean),
    webDir: process.env.SIGHTLINE_WEB_DIR || undefined,
  });
  process.stdout.write(
    `sightline server ${SOFTWARE.version} listening on ${running.url}/ (database: ${running.services.database.engine} ${running.services.database.location})\n`,
  );
  for (const signal of ['SIGINT', 'SIGTERM'] as const)
    process.once(signal, () => void running.close().then(() => process.exit(0)));
} catch (e) {
  const err = e as NodeJS.ErrnoException;
  fail(err.code === 'EADDRINUSE' ? `the port is already in use (${err.message})` : err.message, 1);
}
