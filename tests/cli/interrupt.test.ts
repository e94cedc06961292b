// `--out` never leaves a partial file: the CLI is killed hard (SIGKILL, so no cleanup code runs)
// at seeded moments while it reads, fits and writes a large result; afterwards the output path
// holds either what it held before or the complete new result, byte for byte — never a torn
// file. (Common practice for safe writes: write a temporary file beside the target, then rename
// it, which POSIX makes atomic within one file system.)
import { spawn } from 'node:child_process';
import { existsSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { createRng } from '../../shared/sim/random.js';
import { BIN, ROOT, sightline, tempDir } from '../helpers/cli.js';
import { residualCsv } from '../helpers/residual-csv.js';

const { dir, cleanup } = tempDir('sightline-interrupt-');
afterAll(cleanup);

/** Run the CLI and SIGKILL it after `ms`; resolves with how it ended. */
function killedAfter(
  args: string[],
  ms: number,
): Promise<{ code: number | null; signal: string | null }> {
  return new Promise((resolve) => {
    const child = spawn(process.execPath, [BIN, ...args], { cwd: ROOT, stdio: 'ignore' });
    const timer = setTimeout(() => child.kill('SIGKILL'), ms);
    child.on('exit', (code, signal) => {
      clearTimeout(timer);
      resolve({ code, signal });
    });
  });
}

/** The result with its creation time set aside (the one field that differs between runs). */
const timeless = (b: Buffer) =>
  b.toString('utf8').replace(/"created_utc": "[^"]*"/, '"created_utc": "…"');

describe('killing the CLI mid-write', () => {
  it('leaves the output either as it was or complete, never partial', async () => {
    const input = join(dir, 'big.csv');
    writeFileSync(input, residualCsv('SBP-E', 77, 12_500)); // 10⁵ arrival times
    const args = (out: string) => ['dm', 'fit', input, '--json', '--out', out, '--quiet'];

    const refPath = join(dir, 'reference.json');
    const started = performance.now();
    const ref = sightline(args(refPath));
    const took = performance.now() - started;
    expect(ref.code, ref.stderr).toBe(0);
    const reference = timeless(readFileSync(refPath));
    expect(reference.length).toBeGreaterThan(1_000_000);

    const out = join(dir, 'out.json');
    const old = Buffer.from('{"an": "older result that must survive"}\n');
    const rng = createRng(31);
    const seen = { old: 0, absent: 0, complete: 0 };
    for (let i = 0; i < 8; i++) {
      // half the time there is an older file at the path, half the time none
      if (i % 2) writeFileSync(out, old);
      else rmSync(out, { force: true });
      const at = took * (0.2 + 0.9 * rng.uniform());
      const ended = await killedAfter(args(out), at);
      if (!existsSync(out)) {
        expect(i % 2, `round ${i}: the older file vanished`).toBe(0);
        seen.absent++;
        continue;
      }
      const now = readFileSync(out);
      if (timeless(now) === reference) seen.complete++;
      else {
        expect(now.equals(old), `round ${i} (killed at ${at.toFixed(0)} ms): a torn file`).toBe(
          true,
        );
        seen.old++;
      }
      if (ended.signal !== 'SIGKILL') expect(timeless(now)).toBe(reference);
    }
    console.log(
      `[interrupt] 8 hard kills of dm fit --out: ${seen.complete} complete, ${seen.old} older file kept, ${seen.absent} no file; hidden leftovers: ${readdirSync(dir).filter((f) => f.startsWith('.')).length}`,
    );
    expect(seen.old + seen.absent + seen.complete).toBe(8);
    // nothing visible is left beside the output but the files the test made
    expect(
      readdirSync(dir)
        .filter((f) => !f.startsWith('.'))
        .sort(),
    ).toEqual(
      ['big.csv', 'out.json', 'reference.json'].filter((f) => f !== 'out.json' || existsSync(out)),
    );
  }, 180_000);
});
