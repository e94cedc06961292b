import { randomBytes } from 'node:crypto';
import {
  closeSync,
  createWriteStream,
  openSync,
  readSync,
  renameSync,
  rmSync,
  statSync,
  writeSync,
} from 'node:fs';
import { tmpdir } from 'node:os';
import { basename, dirname, join } from 'node:path';
import { StringDecoder } from 'node:string_decoder';
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

/**
 * Lines kept in a temporary file instead of memory (the visits of a large DM fit): `push`
 * appends a line (it must not contain a line break; JSON.stringify text never does), `lines`
 * reads them back in order, `remove` deletes the file (also done when the process exits).
 */
export class LineSpill {
  private readonly path: string;
  private fd: number | undefined;
  private buffered: string[] = [];
  private bufferedChars = 0;
  private readonly cleanup = () => this.remove();

  constructor(dir: string = tmpdir()) {
    this.path = join(dir, `sightline-spill-${process.pid}-${randomBytes(6).toString('hex')}.txt`);
    this.fd = openSync(this.path, 'wx', 0o600);
    process.once('exit', this.cleanup);
  }

  push(line: string): void {
    this.buffered.push(line);
    this.bufferedChars += line.length + 1;
    // written every ~128 kB, while the lines are young (cheap to collect)
    if (this.bufferedChars > 1 << 17) this.flush();
  }

  private flush(): void {
    if (this.fd === undefined) throw new Error('the spill file is closed');
    if (this.buffered.length === 0) return;
    const data = Buffer.from(this.buffered.join('\n') + '\n', 'utf8');
    let done = 0;
    while (done < data.length) done += writeSync(this.fd, data, done, data.length - done);
    this.buffered = [];
    this.bufferedChars = 0;
  }

  /** The lines pushed so far, in order, read back from the file a megabyte at a time. */
  *lines(): Generator<string> {
    this.flush();
    const fd = openSync(this.path, 'r');
    try {
      const block = Buffer.alloc(1 << 20);
      const decoder = new StringDecoder('utf8');
      let rest = '';
      let position = 0;
      for (;;) {
        const n = readSync(fd, block, 0, block.length, position);
        if (n === 0) break;
        position += n;
        const text = rest + decoder.write(block.subarray(0, n));
        let start = 0;
        for (let nl = text.indexOf('\n'); nl >= 0; nl = text.indexOf('\n', start)) {
          yield text.slice(start, nl);
          start = nl + 1;
        }
        rest = text.slice(start);
      }
      rest += decoder.end();
      if (rest.length) yield rest;
    } finally {
      closeSync(fd);
    }
  }

  remove(): void {
    if (this.fd !== undefined) {
      closeSync(this.fd);
      this.fd = undefined;
    }
    rmSync(this.path, { force: true });
    process.removeListener('exit', this.cleanup);
  }
}
