// Shared pieces of the property-based input tests (fast-check): the one property every reader
// must keep — arbitrary bytes give either a valid result or the project's typed input error,
// whose message names the file, fits on one line and stays short — plus byte-level mutations of
// valid files and the hostile inputs (huge lines, 10⁶ columns, deep nesting, huge numbers).
//
// No timed assertions: a hang or a super-linear blow-up shows up as Vitest's per-test timeout
// (60 s, vite.config.ts). That timeout cannot interrupt a synchronous loop, so a quadratic parse
// of the 1 MB hostile inputs stalls the run instead of failing it: either way it cannot pass.
// fast-check seeds each run at random and prints the seed and the shrunk counterexample of a
// failure; FC_SEED=<n> replays a run.
import fc from 'fast-check';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll } from 'vitest';
import { InputError } from '../../shared/formats/errors.js';
import { CliError, EXIT } from '../../cli/errors.js';

/** The longest error message accepted: an error must never echo megabytes of input. */
export const MAX_MESSAGE = 500;

// ---------------------------------------------------------------------------------------------
// Counting the inputs tried, per parser family (printed when a file finishes; quoted in the README)

const tally = new Map<string, number>();
// each test file loads its own copy of this module: the tally is the file's
afterAll(() => {
  if (!tally.size) return;
  const lines = [...tally].map(([k, v]) => `  ${k}: ${v} inputs`);
  console.log(`inputs tried\n${lines.join('\n')}`);
});

/** Count one input tried against `family`'s parser. */
export function tried(family: string, n = 1): void {
  tally.set(family, (tally.get(family) ?? 0) + n);
}

/** fast-check's assert with the project's settings: `numRuns` runs, FC_SEED replays. */
export async function check<T>(
  prop: fc.IAsyncPropertyWithHooks<T> | fc.IPropertyWithHooks<T>,
  numRuns: number,
): Promise<void> {
  const seed = process.env.FC_SEED ? Number(process.env.FC_SEED) : undefined;
  await fc.assert(prop as fc.IAsyncProperty<T>, { numRuns, seed });
}

// ---------------------------------------------------------------------------------------------
// The outcome property

export type TypedInputError = InputError | CliError;

function describeThrown(e: unknown): string {
  if (e instanceof Error) {
    const msg =
      e.message.length > 300
        ? `${e.message.slice(0, 300)}… (${e.message.length} chars)`
        : e.message;
    return `${e.constructor.name}: ${msg}\n${(e.stack ?? '').split('\n').slice(1, 6).join('\n')}`;
  }
  return String(e);
}

/**
 * Check that `e` is the project's typed input error for `file`: an InputError whose location
 * names `file`, or a CliError with the usage exit code (2); its message names the file, is one
 * line, and holds at most MAX_MESSAGE characters. Throws (failing the property) otherwise.
 */
export function expectInputError(e: unknown, file: string): TypedInputError {
  let message: string;
  if (e instanceof InputError) {
    if (e.location.file !== file)
      throw new Error(`InputError without the file name (${file}): ${describeThrown(e)}`);
    for (const k of ['row', 'line'] as const) {
      const v = e.location[k];
      if (v !== undefined && !(Number.isSafeInteger(v) && v >= 1))
        throw new Error(`InputError with ${k} ${v}: ${describeThrown(e)}`);
    }
    message = e.message;
  } else if (e instanceof CliError) {
    if (e.exitCode !== EXIT.usage)
      throw new Error(`CliError with exit ${e.exitCode}, not 2: ${describeThrown(e)}`);
    message = e.message;
  } else {
    throw new Error(`not a typed input error: ${describeThrown(e)}`);
  }
  if (message.length > MAX_MESSAGE)
    throw new Error(`message of ${message.length} characters: ${message.slice(0, 200)}…`);
  if (!message.includes(file)) throw new Error(`message does not name ${file}: ${message}`);
  if (/[\r\n]/.test(message)) throw new Error(`message spans lines: ${JSON.stringify(message)}`);
  return e;
}

/**
 * For parsers of text or bytes in memory (no file to name): `e` must be an InputError whose
 * message is one line of at most MAX_MESSAGE characters; anything else is rethrown, failing the
 * property. Returns it for further checks of its location.
 */
export function expectBoundedInputError(e: unknown): InputError {
  if (!(e instanceof InputError)) throw e;
  if (e.message.length > MAX_MESSAGE)
    throw new Error(`message of ${e.message.length} characters: ${e.message.slice(0, 200)}…`);
  if (/[\r\n]/.test(e.message))
    throw new Error(`message spans lines: ${JSON.stringify(e.message)}`);
  return e;
}

export type Outcome<T> = { ok: true; value: T } | { ok: false; error: TypedInputError };

/** Run a reader; a result or a typed input error for `file` passes, anything else fails. */
export async function outcome<T>(file: string, read: () => T | Promise<T>): Promise<Outcome<T>> {
  let value: T;
  try {
    value = await read();
  } catch (e) {
    return { ok: false, error: expectInputError(e, file) };
  }
  return { ok: true, value };
}

/** Like `outcome`, but the call must fail; returns the error for further checks. */
export async function rejects(file: string, read: () => unknown): Promise<TypedInputError> {
  const r = await outcome(file, read);
  if (r.ok) throw new Error(`${file}: expected an input error, got a result`);
  return r.error;
}

/** An InputError's location, or a CliError's message parts, for targeted checks. */
export function locationOf(e: TypedInputError) {
  return e instanceof InputError ? e.location : {};
}

// ---------------------------------------------------------------------------------------------
// Files

/** A temporary folder for one test file, removed when it finishes. */
export function scratch(prefix: string): {
  dir: string;
  write: (name: string, b: Uint8Array | string) => string;
} {
  const dir = mkdtempSync(join(tmpdir(), `sightline-prop-${prefix}-`));
  afterAll(() => rmSync(dir, { recursive: true, force: true }));
  return {
    dir,
    write: (name, b) => {
      const path = join(dir, name);
      writeFileSync(path, b);
      return path;
    },
  };
}

export const utf8 = (s: string) => new TextEncoder().encode(s);

// ---------------------------------------------------------------------------------------------
// Byte-level mutations of valid files

/** Text fragments that break parsers: delimiters, quotes, brackets, non-finite numbers, bad UTF-8. */
export const HOSTILE_FRAGMENTS: readonly (string | number[])[] = [
  '"',
  "'",
  ',',
  ';',
  '\t',
  '\n',
  '\r',
  '\r\n',
  '\0',
  '\\',
  '{',
  '}',
  '[',
  ']',
  ':',
  '-',
  '.',
  'e',
  '#',
  '&a',
  '*a',
  '!!',
  '---',
  'NaN',
  'Infinity',
  '-Infinity',
  'nan',
  'null',
  'true',
  '1e999',
  '-1e-999',
  '0x1F',
  '1,5',
  '9'.repeat(400),
  '\u001b[31m',
  '\u2028',
  [0xef, 0xbb, 0xbf], // a BOM in the middle
  [0xc3], // a lone UTF-8 lead byte
  [0xff, 0xfe],
  [0xed, 0xa0, 0x80], // an encoded surrogate (invalid UTF-8)
];

export type Mutation =
  | { kind: 'truncate'; at: number }
  | { kind: 'flip'; at: number; bit: number }
  | { kind: 'set'; at: number; byte: number }
  | { kind: 'insert'; at: number; bytes: number[] }
  | { kind: 'fragment'; at: number; fragment: number }
  | { kind: 'duplicate'; at: number; len: number }
  | { kind: 'delete'; at: number; len: number }
  | { kind: 'bom' }
  | { kind: 'crlf' }
  | { kind: 'cr' };

/** One mutation; positions are taken modulo the file's length, so they fit any file. */
export const mutationArb: fc.Arbitrary<Mutation> = fc.oneof(
  fc.record({ kind: fc.constant('truncate' as const), at: fc.nat() }),
  fc.record({ kind: fc.constant('flip' as const), at: fc.nat(), bit: fc.nat({ max: 7 }) }),
  fc.record({ kind: fc.constant('set' as const), at: fc.nat(), byte: fc.nat({ max: 255 }) }),
  fc.record({
    kind: fc.constant('insert' as const),
    at: fc.nat(),
    bytes: fc.array(fc.nat({ max: 255 }), { minLength: 1, maxLength: 8 }),
  }),
  fc.record({
    kind: fc.constant('fragment' as const),
    at: fc.nat(),
    fragment: fc.nat({ max: HOSTILE_FRAGMENTS.length - 1 }),
  }),
  fc.record({ kind: fc.constant('duplicate' as const), at: fc.nat(), len: fc.nat({ max: 200 }) }),
  fc.record({ kind: fc.constant('delete' as const), at: fc.nat(), len: fc.nat({ max: 40 }) }),
  fc.constant({ kind: 'bom' as const }),
  fc.constant({ kind: 'crlf' as const }),
  fc.constant({ kind: 'cr' as const }),
);

/** One to three mutations in a row. */
export const mutationsArb = fc.array(mutationArb, { minLength: 1, maxLength: 3 });

function fragmentBytes(f: string | number[]): Uint8Array {
  return typeof f === 'string' ? utf8(f) : Uint8Array.from(f);
}

function splice(b: Uint8Array, at: number, remove: number, insert: Uint8Array): Uint8Array {
  const out = new Uint8Array(b.length - remove + insert.length);
  out.set(b.subarray(0, at));
  out.set(insert, at);
  out.set(b.subarray(at + remove), at + insert.length);
  return out;
}

/** Apply one mutation (positions taken modulo the length). */
export function mutate(b: Uint8Array, m: Mutation): Uint8Array {
  const pos = (at: number, extra = 0) => at % (b.length + extra || 1);
  switch (m.kind) {
    case 'truncate':
      return b.slice(0, pos(m.at, 1));
    case 'flip': {
      if (!b.length) return b;
      const out = b.slice();
      out[pos(m.at)] ^= 1 << m.bit;
      return out;
    }
    case 'set': {
      if (!b.length) return b;
      const out = b.slice();
      out[pos(m.at)] = m.byte;
      return out;
    }
    case 'insert':
      return splice(b, pos(m.at, 1), 0, Uint8Array.from(m.bytes));
    case 'fragment':
      return splice(b, pos(m.at, 1), 0, fragmentBytes(HOSTILE_FRAGMENTS[m.fragment]));
    case 'duplicate': {
      const at = pos(m.at, 1);
      return splice(b, at, 0, b.slice(at, at + m.len));
    }
    case 'delete':
      return splice(b, pos(m.at, 1), Math.min(m.len, b.length - pos(m.at, 1)), new Uint8Array());
    case 'bom':
      return splice(b, 0, 0, Uint8Array.from([0xef, 0xbb, 0xbf]));
    case 'crlf':
      return Buffer.from(Buffer.from(b).toString('latin1').replace(/\r?\n/g, '\r\n'), 'latin1');
    case 'cr':
      return Buffer.from(Buffer.from(b).toString('latin1').replace(/\r?\n/g, '\r'), 'latin1');
  }
}

export function mutateAll(b: Uint8Array, ms: Mutation[]): Uint8Array {
  return ms.reduce(mutate, b);
}

// ---------------------------------------------------------------------------------------------
// Hostile inputs (built once; each a few megabytes at most)

/** A line of `n` copies of `unit`. */
export const longRun = (unit: string, n: number) => unit.repeat(n);

/** `depth` nested JSON arrays: [[[[…]]]] */
export const deepArrays = (depth: number) => '['.repeat(depth) + ']'.repeat(depth);

/** `depth` nested JSON objects under key `k`: {"k":{"k":…}} */
export const deepObjects = (depth: number, k = 'a') =>
  `{"${k}":`.repeat(depth) + '1' + '}'.repeat(depth);

/** A CSV header of `n` columns (with `first` at the front). */
export function wideHeader(n: number, first: string[] = []): string {
  const cols = [...first];
  for (let i = cols.length; i < n; i++) cols.push(`c${i}`);
  return cols.join(',');
}

/** Number-shaped text that no finite double holds, or that is very long. */
export const HUGE_NUMBERS = [
  '1e309',
  '-1e309',
  '1e999999999',
  '9'.repeat(400),
  '9'.repeat(100_000),
  '0.' + '0'.repeat(100_000) + '1',
  '1' + '0'.repeat(400) + '.5',
  '4.9e-325',
];

export const NON_FINITE_TEXT = ['NaN', 'nan', 'Infinity', '-Infinity', 'inf', '+Inf', '∞'];

/** True when a JSON text holds no NaN/Infinity numbers (JSON.stringify would have made them null). */
export function jsonHasNoNonFinite(value: unknown): boolean {
  let ok = true;
  JSON.stringify(value, (_k, v) => {
    if (typeof v === 'number' && !Number.isFinite(v)) ok = false;
    return v;
  });
  return ok;
}
