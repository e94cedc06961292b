// `sightline serve` as a real child process, for tests that kill it hard and start it again.
import { spawn, type ChildProcess } from 'node:child_process';
import { BIN, ROOT } from './cli.js';

export interface Served {
  child: ChildProcess;
  url: string;
  stderr: () => string;
}

/** Start the server on a free port; resolves once it prints its URL. */
export function serve(
  dataDir: string,
  env: Record<string, string>,
  extra: string[] = [],
): Promise<Served> {
  return new Promise((resolve, reject) => {
    const child = spawn(
      process.execPath,
      [BIN, 'serve', '--port', '0', '--data-dir', dataDir, ...extra],
      {
        cwd: ROOT,
        env: { ...process.env, LOG_LEVEL: 'warn', ...env },
        stdio: ['ignore', 'pipe', 'pipe'],
      },
    );
    let out = '';
    let err = '';
    child.stderr!.setEncoding('utf8').on('data', (c: string) => (err += c));
    child.stdout!.setEncoding('utf8').on('data', (c: string) => {
      out += c;
      const m = /review app on (http:\/\/[\d.:]+)\//.exec(out);
      if (m) resolve({ child, url: m[1], stderr: () => err });
    });
    child.on('exit', (code) => reject(new Error(`server exited (${code}): ${err}`)));
  });
}

/** SIGKILL: no shutdown code runs, as in a power cut or an OOM kill. */
export const killHard = (c: ChildProcess) =>
  new Promise<void>((resolve) => {
    if (c.exitCode !== null || c.signalCode !== null) return resolve();
    c.removeAllListeners('exit');
    c.once('exit', () => resolve());
    c.kill('SIGKILL');
  });

/** SIGTERM and wait for a clean exit. */
export const stopGently = (c: ChildProcess) =>
  new Promise<void>((resolve) => {
    if (c.exitCode !== null || c.signalCode !== null) return resolve();
    c.removeAllListeners('exit');
    c.once('exit', () => resolve());
    c.kill('SIGTERM');
  });
