import { createWriteStream, mkdirSync, renameSync, rmSync } from 'node:fs';
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
  try {
    mkdirSync(dir, { recursive: true });
  } catch (e) {
    throw ioFailure(`${dir}: cannot create the output folder (${(e as Error).message})`);
  }
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
  process.once('exit', cleanup);
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
  try {
    mkdirSync(dir, { recursive: true });
  } catch (e) {
    throw ioFailure(`${dir}: cannot create the output folder (${(e as Error).message})`);
  }
  const temp = join(dir, `.${basename(path)}.${process.pid}.tmp`);
  try {
    writeFileSync(temp, data, { flag: 'wx' });
    renameSync(temp, path);
  } catch (e) {
    rmSync(temp, { force: true });
    throw ioFailure(`${path}: ${(e as Error).message}`);
  }
}
