// `node dist/server/main.js [--port N] [--host H] [--data-dir DIR]` — the review server on its
// own; `sightline serve` does the same. Environment: see server/config.ts and the README.
import { parseArgs } from 'node:util';
import { configFromEnv } from './config.js';
import { SOFTWARE } from './software.js';
import { startServer } from './start.js';

function fail(message: string, code: number): never {
  process.stderr.write(`sightline server: ${message}\n`);
  process.exit(code);
}

let config;
try {
  const args = parseArgs({
    options: {
      port: { type: 'string' },
      host: { type: 'string' },
      'data-dir': { type: 'string' },
    },
  }).values;
  config = configFromEnv({
    port: args.port === undefined ? undefined : Number(args.port),
    host: args.host,
    dataDir: args['data-dir'],
  });
} catch (e) {
  fail((e as Error).message, 2);
}

try {
  const running = await startServer(config);
  process.stdout.write(
    `sightline server ${SOFTWARE.version} listening on ${running.url}/ (database: ${running.services.database.engine} ${running.services.database.location})\n`,
  );
  for (const signal of ['SIGINT', 'SIGTERM'] as const)
    process.once(signal, () => void running.close().then(() => process.exit(0)));
} catch (e) {
  const err = e as NodeJS.ErrnoException;
  fail(err.code === 'EADDRINUSE' ? `the port is already in use (${err.message})` : err.message, 1);
}
