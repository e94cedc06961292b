import { InputError, type InputLocation } from './errors.js';

/**
 * Where and why a JSON text is not valid JSON (RFC 8259), for error messages: JSON.parse says
 * "at position N" for some errors but only quotes an excerpt for others ("Unexpected token"),
 * so the text is scanned again here — once, only after JSON.parse has refused it. The scan is
 * iterative (no recursion, so 10⁵ nested arrays cost nothing) and linear in the text.
 * `nonFinite` also accepts the bare NaN, Infinity and -Infinity that Python's json module writes.
 */
export function jsonSyntaxProblem(
  text: string,
  opts: { nonFinite?: boolean } = {},
): { offset: number; reason: string } | undefined {
  const n = text.length;
  let i = 0;
  /** open containers: '[' or '{' */
  const stack: string[] = [];
  const ws = () => {
    while (i < n) {
      const c = text.charCodeAt(i);
      if (c !== 0x20 && c !== 0x09 && c !== 0x0a && c !== 0x0d) break;
      i++;
    }
  };
  const fail = (reason: string) => ({ offset: i, reason });
  const found = () => {
    if (i >= n) return 'the text ends';
    const c = String.fromCodePoint(text.codePointAt(i)!);
    const code = c.codePointAt(0)!;
    return code < 0x20 || (code >= 0x7f && code < 0xa0)
      ? `found character U+${code.toString(16).padStart(4, '0').toUpperCase()}`
      : `found '${c}'`;
  };

  /** A string at i (text[i] === '"'); returns a problem or undefined, i after the string. */
  const string = () => {
    i++;
    for (;;) {
      if (i >= n) return fail('the text ends inside a string');
      const c = text.charCodeAt(i);
      if (c === 0x22) {
        i++;
        return undefined;
      }
      if (c < 0x20) return fail('a control character (such as a line break) inside a string');
      if (c === 0x5c) {
        const e = text[i + 1];
        if (e !== undefined && '"\\/bfnrt'.includes(e)) i += 2;
        else if (e === 'u' && /^[0-9a-fA-F]{4}$/.test(text.slice(i + 2, i + 6))) i += 6;
        else return fail('a bad escape in a string');
      } else i++;
    }
  };

  const NUMBER = /-?(?:0|[1-9]\d*)(?:\.\d+)?(?:[eE][+-]?\d+)?/y;
  const WORDS = opts.nonFinite
    ? ['true', 'false', 'null', 'NaN', 'Infinity', '-Infinity']
    : ['true', 'false', 'null'];

  /** A scalar ('done') or the opening of a container ('open') at i, or the problem found. */
  const value = (): 'open' | 'done' | { offset: number; reason: string } => {
    ws();
    const c = text[i];
    if (c === '[' || c === '{') {
      stack.push(c);
      i++;
      return 'open';
    }
    if (c === '"') return string() ?? 'done';
    for (const w of WORDS) {
      if (text.startsWith(w, i)) {
        i += w.length;
        return 'done';
      }
    }
    if (c === '-' || (c >= '0' && c <= '9')) {
      NUMBER.lastIndex = i;
      const m = NUMBER.exec(text);
      if (!m) return fail('a malformed number');
      i += m[0].length;
      const next = text[i];
      if (next !== undefined && /[0-9.eE+-]/.test(next)) return fail('a malformed number');
      return 'done';
    }
    return fail(`expected a value, ${found()}`);
  };

  let r = value();
  if (typeof r === 'object') return r;
  /** just after an opening bracket: the container may close at once */
  let first = r === 'open';
  for (;;) {
    ws();
    const top = stack[stack.length - 1];
    if (top === undefined) {
      return i < n ? fail(`unexpected text after the JSON value, ${found()}`) : undefined;
    }
    const close = top === '[' ? ']' : '}';
    if (text[i] === close) {
      stack.pop();
      i++;
      first = false;
      continue;
    }
    if (!first) {
      if (text[i] !== ',') return fail(`expected ',' or '${close}', ${found()}`);
      i++;
    }
    if (top === '{') {
      ws();
      if (text[i] !== '"') return fail(`expected a property name in double quotes, ${found()}`);
      const q = string();
      if (q) return q;
      ws();
      if (text[i] !== ':') return fail(`expected ':' after a property name, ${found()}`);
      i++;
    }
    r = value();
    if (typeof r === 'object') return r;
    first = r === 'open';
  }
}

/** Line and character (both from 1) of an offset in a text. */
export function lineAndCharacter(text: string, offset: number): { line: number; char: number } {
  const p = Math.max(0, Math.min(offset, text.length));
  let line = 1;
  let lineStart = 0;
  for (let k = text.indexOf('\n'); k >= 0 && k < p; k = text.indexOf('\n', k + 1)) {
    line++;
    lineStart = k + 1;
  }
  return { line, char: p - lineStart + 1 };
}

/**
 * An InputError for JSON text that JSON.parse refused: the line (in `location`) and character
 * where the text stops being JSON, and why, e.g. `line 3: not valid JSON at character 14
 * (expected ',' or '}', found ']')`. `text` must be the file's own text (line numbers are the
 * file's), less a leading BOM.
 */
export function jsonSyntaxError(
  text: string,
  location: InputLocation = {},
  opts: { nonFinite?: boolean } = {},
): InputError {
  const problem = jsonSyntaxProblem(text, opts);
  if (!problem) return new InputError('not valid JSON', location);
  const { line, char } = lineAndCharacter(text, problem.offset);
  return new InputError(`not valid JSON at character ${char} (${problem.reason})`, {
    ...location,
    line: (location.line ?? 1) + line - 1,
  });
}
