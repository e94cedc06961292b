// Start the review server: database (migrated), services, HTTP; stop it cleanly on a signal.
import type { Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { createApp } from './app.js';
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

/** Bundled as dist/server/*.js or dist/cli/*.js the web app is in dist/web; from source too. */
export function defaultWebDir(): string {
  const here = path.dirname(fileURLToPath(import.meta.url));
  const inDist = path.basename(path.dirname(here)) === 'dist';
  return path.resolve(here, inDist ? '../web' : '../dist/web');
}

export async function startServer(o: StartOptions): Promise<RunningServer> {
  const hostForUrl = o.host.includes(':') ? `[${o.host}]` : o.host;
  // the port may be 0 (any free one): bind first, then build the services with the real URL
  const { createServer } = await import('node:http');
  const server = createServer();
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
  const app = createApp({
    webDir: o.webDir ?? defaultWebDir(),
    services,
    trustProxy: o.trustProxy,
  });
  server.on('request', app);
  await services.analyses.resume();
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
        });
        await services.close();
      })();
      return closing;
    },
  };
}
