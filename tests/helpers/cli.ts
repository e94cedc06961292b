import { spawn, spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';

export const ROOT = resolve(import.meta.dirname, '../..');
export const BIN = join(ROOT, 'bin/sightline');

export interface RunResult {
  code: number;
  stdout: string;
  stderr: string;
}

/** Run the built CLI as a subprocess (the way pipelines run it). */
export function sightline(
  args: string[],
  opts: { cwd?: string; env?: Record<string, string>; nodeOptions?: string } = {},
): RunResult {
  const r = spawnSync(
    process.execPath,
    [...(opts.nodeOptions ? [opts.nodeOptions] : []), BIN, ...args],
    {
      cwd: opts.cwd ?? ROOT,
      env: { ...process.env, ...opts.env },
      encoding: 'utf8',
      maxBuffer: 512 * 1024 * 1024,
    },
  );
  return { code: r.status ?? -1, stdout: r.stdout, stderr: r.stderr };
}

export function tempDir(prefix = 'sightline-test-'): { dir: string; cleanup: () => void } {
  const dir = mkdtempSync(join(tmpdir(), prefix));
  return { dir, cleanup: () => rmSync(dir, { recursive: true, force: true }) };
}

/**
 * The CLI as a subprocess without blocking this process: needed when the server under test runs
 * in the same process as the test (spawnSync would stop it from answering).
 */
export function sightlineAsync(
  args: string[],
  opts: { cwd?: string; env?: Record<string, string> } = {},
): Promise<RunResult> {
  return new Promise((resolvePromise, reject) => {
    const child = spawn(process.execPath, [BIN, ...args], {
      cwd: opts.cwd ?? ROOT,
      env: { ...process.env, ...opts.env },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let stdout = '';
    let stderr = '';
    child.stdout.setEncoding('utf8').on('data', (c: string) => (stdout += c));
    child.stderr.setEncoding('utf8').on('data', (c: string) => (stderr += c));
    child.on('error', reject);
    child.on('close', (code) => resolvePromise({ code: code ?? -1, stdout, stderr }));
  });
}
