import { createWriteStream, renameSync, rmSync, statSync } from 'node:fs';
import { basename, dirname, join } from 'node:path';
import { ioFailure } from '../errors.js';

/**
 * Where machine output goes: stdout, or a file written atomically (a temporary file beside it,
 * renamed into place on success and removed on failure, so a failed run leaves nothing).
 */
export interface Output {
  write(chunk: string): Promise<void>;
  commit(): Promise<void>;
  abort(): void;
}

/** The output's folder must exist: a mistyped path should fail, not create folders. */
function checkFolder(dir: string): void {
  let ok: boolean;
  try {
    ok = statSync(dir).isDirectory();
  } catch {
    ok = false;
  }
  if (!ok) throw ioFailure(`${dir}: no such folder for the output file`);
}

function waitDrain(stream: NodeJS.WritableStream, chunk: string): Promise<void> {
  return new Promise((resolve, reject) => {
    const ok = stream.write(chunk, (err) => (err ? reject(err) : undefined));
    if (ok) resolve();
    else stream.once('drain', resolve);
  });
}

export function openOutput(path?: string): Output {
  if (!path || path === '-') {
    return {
      write: (chunk) => waitDrain(process.stdout, chunk),
      commit: async () => undefined,
      abort: () => undefined,
    };
  }
  const dir = dirname(path);
  checkFolder(dir);
  const temp = join(dir, `.${basename(path)}.${process.pid}.tmp`);
  const stream = createWriteStream(temp, { flags: 'wx' });
  let failed: Error | undefined;
  stream.on('error', (e) => (failed = e));
  let done = false;
  const cleanup = () => {
    if (done) return;
    done = true;
    stream.destroy();
    rmSync(temp, { force: true });
  };
  // an interrupted run leaves no temporary file either
  const onSignal = (signal: NodeJS.Signals) => {
    cleanup();
    process.exit(signal === 'SIGINT' ? 130 : 143);
  };
  process.once('exit', cleanup);
  process.once('SIGINT', onSignal);
  process.once('SIGTERM', onSignal);
  return {
    async write(chunk) {
      if (failed) throw ioFailure(`${path}: ${failed.message}`);
      await waitDrain(stream, chunk);
    },
    async commit() {
      await new Promise<void>((resolve, reject) =>
        stream.end((err?: Error | null) => (err ? reject(err) : resolve())),
      );
      if (failed) throw ioFailure(`${path}: ${failed.message}`);
      renameSync(temp, path);
      done = true;
      process.removeListener('exit', cleanup);
      process.removeListener('SIGINT', onSignal);
      process.removeListener('SIGTERM', onSignal);
    },
    abort: cleanup,
  };
}

/** Write a text, or its pieces in order, atomically (or to stdout). */
export async function writeOutput(
  path: string | undefined,
  text: string | Iterable<string>,
): Promise<void> {
  const out = openOutput(path);
  try {
    if (typeof text === 'string') await out.write(text);
    else for (const piece of text) await out.write(piece);
    await out.commit();
  } catch (e) {
    out.abort();
    throw e;
  }
}

/** Write bytes to a file atomically: a temporary file beside it, renamed into place. */
export async function writeFileAtomic(path: string, data: Uint8Array | string): Promise<void> {
  const { writeFileSync } = await import('node:fs');
  const dir = dirname(path);
  checkFolder(dir);
  const temp = join(dir, `.${basename(path)}.${process.pid}.tmp`);
  try {
    writeFileSync(temp, data, { flag: 'wx' });
    renameSync(temp, path);
  } catch (e) {
    rmSync(temp, { force: true });
    throw ioFailure(`${path}: ${(e as Error).message}`);
  }
}
