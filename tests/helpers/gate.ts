// A TCP gate in front of a test server, at one fixed address, so a CLI can find "the server"
// reachable, refusing connections, or resetting them, without its URL changing:
//   'open'   — every connection is passed through to the server;
//   'reset'  — connections are accepted, counted and reset at once (the server is unreachable);
//   'closed' — nothing listens on the port (connection refused), as when the server is down.
import net from 'node:net';

export type GateMode = 'open' | 'reset' | 'closed';

export interface Gate {
  /** http://127.0.0.1:PORT, the same in every mode */
  url: string;
  /** connections accepted since the last `mode` call */
  readonly connections: number;
  mode(mode: GateMode): Promise<void>;
  close(): Promise<void>;
}

export async function startGate(target: string): Promise<Gate> {
  const to = new URL(target);
  const sockets = new Set<net.Socket>();
  let current: GateMode = 'open';
  let connections = 0;
  const server = net.createServer((client) => {
    connections++;
    sockets.add(client);
    client.on('close', () => sockets.delete(client));
    client.on('error', () => undefined);
    if (current === 'reset') {
      client.resetAndDestroy();
      return;
    }
    const upstream = net.connect(Number(to.port), to.hostname);
    sockets.add(upstream);
    upstream.on('close', () => sockets.delete(upstream));
    upstream.on('error', () => client.destroy());
    client.on('error', () => upstream.destroy());
    client.pipe(upstream).pipe(client);
  });
  const listen = (port: number) =>
    new Promise<void>((resolve, reject) => {
      server.once('error', reject);
      server.listen(port, '127.0.0.1', () => {
        server.off('error', reject);
        resolve();
      });
    });
  const stop = () =>
    new Promise<void>((resolve) => {
      for (const s of sockets) s.destroy();
      server.close(() => resolve());
    });
  await listen(0);
  const port = (server.address() as net.AddressInfo).port;
  return {
    url: `http://127.0.0.1:${port}`,
    get connections() {
      return connections;
    },
    async mode(mode: GateMode) {
      const wasListening = server.listening;
      current = mode;
      connections = 0;
      if (mode === 'closed' && wasListening) await stop();
      else if (mode !== 'closed' && !wasListening) await listen(port);
    },
    async close() {
      if (server.listening) await stop();
    },
  };
}
