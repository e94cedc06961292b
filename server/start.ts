// Start the review server: database (migrated), services, HTTP; stop it cleanly on a signal.
import type { IncomingMessage, Server, ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { createApp } from './app.js';
import { distDir } from './paths.js';
import { defaultAnalysisThreads } from './jobs/pool.js';
import { createServices, type RunningServices, type ServerConfig } from './services.js';

export interface StartOptions extends Omit<ServerConfig, 'publicUrl'> {
  port: number;
  host: string;
  webDir?: string;
  /** defaults to http://<host>:<port> */
  publicUrl?: string;
  trustProxy?: boolean | number | string;
}

export interface RunningServer {
  url: string;
  services: RunningServices;
  server: Server;
  close(): Promise<void>;
}

/** The built web app (vite build): dist/web of the package. */
export const defaultWebDir = () => distDir('web');

export async function startServer(o: StartOptions): Promise<RunningServer> {
  const hostForUrl = o.host.includes(':') ? `[${o.host}]` : o.host;
  // The port may be 0 (any free one): bind first, then build the services with the real URL.
  // Until they are ready every request gets a prompt 503, never a connection left hanging.
  const { createServer } = await import('node:http');
  const ready: { app?: (req: IncomingMessage, res: ServerResponse) => void } = {};
  const server = createServer((req, res) => {
    if (ready.app) {
      ready.app(req, res);
      return;
    }
    res.writeHead(503, { 'content-type': 'application/json', 'retry-after': '1' });
    res.end(JSON.stringify({ error: { code: 'starting', message: 'the server is starting' } }));
  });
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(o.port, o.host, () => resolve());
  });
  const port = (server.address() as AddressInfo).port;
  const url = o.publicUrl ?? `http://${hostForUrl}:${port}`;
  let services: RunningServices;
  try {
    services = await createServices({ ...o, publicUrl: url });
  } catch (err) {
    server.close();
    throw err;
  }
  ready.app = createApp({
    webDir: o.webDir ?? defaultWebDir(),
    services,
    trustProxy: o.trustProxy,
  });
  // the embedded database belongs to this process alone, so jobs it left running are orphans
  const embedded = services.database.engine === 'pglite';
  await services.analyses.resume({ orphansAreOurs: embedded });
  if (embedded || o.inProcessWorker !== false)
    await services.analyses.work(Math.max(1, o.analysisThreads ?? defaultAnalysisThreads()));
  let closing: Promise<void> | undefined;
  return {
    url,
    services,
    server,
    close() {
      closing ??= (async () => {
        await new Promise<void>((resolve) => {
          server.close(() => resolve());
          server.closeIdleConnections();
          // requests still running after a grace period are cut, so shutdown always ends
          setTimeout(() => server.closeAllConnections(), 5_000).unref();
        });
        await services.close();
      })();
      return closing;
    },
  };
}
