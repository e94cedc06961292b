// Result files (what `runs push` and `baseline check` read) through cli/io/read-result.ts:
// valid dm-fit and scatter-fit results read back; mutated and hostile files give a result or a
// usage error (exit 2) naming the file, on one line of at most 500 characters.
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { readResult } from '../../cli/io/read-result.js';
import { dmFit, scatterFit } from '../helpers/results.js';
import {
  check,
  deepArrays,
  deepObjects,
  mutateAll,
  mutationsArb,
  outcome,
  rejects,
  scratch,
  tried,
  utf8,
} from './harness.js';

const FAMILY = 'result files (dm-fit, scatter-fit JSON)';
const { write } = scratch('results');

const resultArb = fc.oneof(
  fc
    .array(
      fc.record({
        mjd: fc.double({ min: 50000, max: 70000, noNaN: true }),
        dm: fc.double({ min: 0, max: 1000, noNaN: true }),
        dm_err: fc.double({ min: 1e-6, max: 1, noNaN: true }),
      }),
      { minLength: 1, maxLength: 5 },
    )
    .map((v) => dmFit('SBP-A', v) as unknown),
  fc
    .array(
      fc.tuple(
        fc.integer({ min: 100, max: 5000 }),
        fc.double({ min: 0, max: 1e4, noNaN: true }),
        fc.double({ min: 1e-3, max: 100, noNaN: true }),
      ),
      { minLength: 1, maxLength: 4 },
    )
    .map((b) => scatterFit('SBP-D', b) as unknown),
);

const read = (path: string) => outcome(path, () => readResult(path));

describe('result files', () => {
  it('valid results read back as they were written', async () => {
    await check(
      fc.asyncProperty(resultArb, fc.boolean(), async (r, pretty) => {
        tried(FAMILY);
        const path = write('valid.json', JSON.stringify(r, null, pretty ? 2 : undefined));
        expect(await readResult(path)).toEqual(r);
      }),
      60,
    );
  });

  it('mutated results: a result or a usage error naming the file', async () => {
    await check(
      fc.asyncProperty(resultArb, mutationsArb, fc.boolean(), async (r, ms, pretty) => {
        tried(FAMILY);
        const text = JSON.stringify(r, null, pretty ? 2 : undefined);
        const path = write('mutated.json', mutateAll(utf8(text), ms));
        const got = await read(path);
        if (got.ok) expect(got.value.schema).toMatch(/^sightline\//);
      }),
      300,
    );
  });

  it('a syntax error names its line and character', async () => {
    tried(FAMILY);
    const path = write(
      'syntax.json',
      '{\n  "schema": "sightline/dm-fit@1",\n  "visits": [1,,2]\n}',
    );
    expect((await rejects(path, () => readResult(path))).message).toMatch(
      /syntax\.json: not JSON \(line 3, character 16: expected a value, found ','\)/,
    );
  });

  it('hostile files: deep nesting, huge values and keys, 10⁶ visits of the wrong type, NaN text', async () => {
    const base = dmFit('SBP-A', [{ mjd: 60000, dm: 10, dm_err: 0.1 }]) as Record<string, unknown>;
    const cases: [string, string][] = [
      ['deep.json', deepArrays(100_000)],
      ['deep-o.json', deepObjects(100_000)],
      [
        'deep-visits.json',
        JSON.stringify({ ...base, visits: '__D__' }).replace('"__D__"', deepArrays(100_000)),
      ],
      ['huge-schema.json', JSON.stringify({ ...base, schema: `sightline/${'x'.repeat(1 << 20)}` })],
      ['huge-key.json', JSON.stringify({ ...base, ['k\n'.repeat(1 << 19)]: 1 })],
      ['many.json', JSON.stringify({ ...base, visits: new Array(1_000_000).fill(0) })],
      ['nan.json', JSON.stringify(base).replace(/"dm":10/, '"dm":NaN')],
      ['inf.json', JSON.stringify(base).replace(/"dm":10/, '"dm":1e999')],
      ['bom.json', `\uFEFF\uFEFF${JSON.stringify(base)}`],
      ['empty.json', ''],
      ['nul.json', '\0'.repeat(1024)],
    ];
    for (const [name, text] of cases) {
      tried(FAMILY);
      const path = write(name, text);
      const r = await read(path);
      if (name === 'huge-key.json') {
        // results may carry keys a later version adds: an unknown key is dropped, not refused
        if (r.ok) expect(Object.keys(r.value).every((k) => k.length < 1000)).toBe(true);
        continue;
      }
      expect(r.ok, name).toBe(false);
    }
    tried(FAMILY);
    const bom = write('one-bom.json', `\uFEFF${JSON.stringify(base)}`);
    expect((await read(bom)).ok).toBe(true);
  });
});
