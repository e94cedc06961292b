import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { parseArgs } from 'node:util';
import { createApp } from './app.js';
import { SOFTWARE } from './software.js';

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

/** Bundled as dist/server/main.js the web app sits beside it in dist/web; from source, in dist/web. */
function defaultWebDir(): string {
  const here = path.dirname(fileURLToPath(import.meta.url));
  const bundled = path.basename(path.dirname(here)) === 'dist';
  return path.resolve(here, bundled ? '../web' : '../dist/web');
}

let args;
try {
  args = parseArgs({ options: { port: { type: 'string' } } }).values;
} catch (e) {
  fail((e as Error).message, 2);
}

const port = parsePort(args.port ?? process.env.PORT);
const host = process.env.HOST || '127.0.0.1';
const webDir = process.env.SIGHTLINE_WEB_DIR || defaultWebDir();

const server = createApp({ webDir }).listen(port, host, (err?: NodeJS.ErrnoException) => {
  if (err)
    fail(err.code === 'EADDRINUSE' ? `port ${port} on ${host} is already in use` : err.message, 1);
  const address = server.address();
  const actualPort = typeof address === 'object' && address ? address.port : port;
  process.stdout.write(
    `sightline server ${SOFTWARE.version} listening on http://${host}:${actualPort}/ (web: ${webDir})\n`,
  );
});

for (const signal of ['SIGINT', 'SIGTERM'] as const) {
  process.once(signal, () => server.close(() => process.exit(0)));
}
