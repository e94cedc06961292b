// shared/formats/json.ts: the scanner that locates JSON syntax errors must agree with JSON.parse
// (the reference: ECMAScript's JSON.parse implements RFC 8259) on which texts are JSON, and the
// errors it builds carry a line and stay one short line however large or deep the text.
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { jsonSyntaxError, jsonSyntaxProblem, lineAndCharacter } from '../../shared/formats/json.js';
import {
  check,
  deepArrays,
  deepObjects,
  MAX_MESSAGE,
  mutateAll,
  mutationsArb,
  tried,
  utf8,
} from './harness.js';

const FAMILY = 'JSON syntax errors (shared/formats/json.ts)';

const parses = (t: string) => {
  try {
    JSON.parse(t);
    return true;
  } catch {
    return false;
  }
};

describe('jsonSyntaxProblem agrees with JSON.parse', () => {
  it('generated JSON texts (any spacing) are valid', async () => {
    await check(
      fc.property(fc.jsonValue(), fc.constantFrom(undefined, 1, '\t', '\r\n '), (v, space) => {
        tried(FAMILY);
        const text = JSON.stringify(v, null, space);
        expect(jsonSyntaxProblem(text)).toBeUndefined();
      }),
      300,
    );
  });

  it('mutated JSON texts: a problem exactly when JSON.parse refuses them, at an offset inside the text', async () => {
    await check(
      fc.property(fc.jsonValue({ maxDepth: 4 }), mutationsArb, (v, ms) => {
        tried(FAMILY);
        const text = new TextDecoder().decode(mutateAll(utf8(JSON.stringify(v, null, 1)), ms));
        const problem = jsonSyntaxProblem(text);
        expect(problem === undefined).toBe(parses(text));
        if (problem) {
          expect(problem.offset).toBeGreaterThanOrEqual(0);
          expect(problem.offset).toBeLessThanOrEqual(text.length);
          const e = jsonSyntaxError(text, { file: 'f.json' });
          expect(e.location.line).toBe(lineAndCharacter(text, problem.offset).line);
          expect(e.message.length).toBeLessThanOrEqual(MAX_MESSAGE);
          expect(e.message).not.toMatch(/[\r\n]/);
        }
      }),
      400,
    );
  });

  it('bare NaN and ±Infinity are accepted only when asked for', () => {
    for (const t of ['NaN', '[Infinity]', '{"a":-Infinity}', '[1,NaN,2]']) {
      tried(FAMILY);
      expect(jsonSyntaxProblem(t)).toBeDefined();
      expect(jsonSyntaxProblem(t, { nonFinite: true })).toBeUndefined();
    }
    expect(jsonSyntaxProblem('[-NaN]', { nonFinite: true })).toBeDefined();
  });

  it('positions and reasons of common mistakes (checked by hand against the texts)', () => {
    const cases: [string, number, number, RegExp][] = [
      ['{"a":1,\n}', 2, 1, /property name/],
      ['{"a":}', 1, 6, /expected a value, found '}'/],
      ['[1,2', 1, 5, /expected ',' or ']', the text ends/],
      ['[1,]', 1, 4, /expected a value/],
      ['{"a" 1}', 1, 6, /expected ':'/],
      ['"ab\ncd"', 1, 4, /control character/],
      ['[01]', 1, 3, /malformed number/],
      ['[1] x', 1, 5, /after the JSON value/],
      ['\n\n  [tru]', 3, 4, /expected a value, found 't'/],
      ['["\\x"]', 1, 3, /bad escape/],
      ['', 1, 1, /the text ends/],
    ];
    for (const [text, line, char, reason] of cases) {
      tried(FAMILY);
      const p = jsonSyntaxProblem(text);
      expect(p, text).toBeDefined();
      expect(lineAndCharacter(text, p!.offset), text).toEqual({ line, char });
      expect(p!.reason, text).toMatch(reason);
    }
  });

  it('10⁵ nested arrays and objects, valid and unclosed, and a 4 MB string: no recursion, a bounded message', () => {
    for (const text of [
      deepArrays(100_000),
      deepObjects(100_000),
      '['.repeat(100_000),
      `{"a":${'['.repeat(100_000)}}`,
      `["${'x'.repeat(4 << 20)}`,
      `[${'1,'.repeat(1 << 20)}]`,
    ]) {
      tried(FAMILY);
      expect(jsonSyntaxProblem(text) === undefined).toBe(parses(text));
      const e = jsonSyntaxError(text, { file: 'deep.json' });
      expect(e.message.length).toBeLessThanOrEqual(MAX_MESSAGE);
    }
  });
});
