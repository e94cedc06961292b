// Batch manifests (YAML or JSON) through cli/io/read-manifest.ts: generated valid manifests
// read back to the jobs written; mutated and hostile ones (alias bombs, deep nesting, huge keys
// and values) give a manifest or a usage error (exit 2) naming the file, on one line of at most
// 500 characters — never a ReferenceError, a stack overflow or an "internal error".
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { stringify as toYaml } from 'yaml';
import {
  MANIFEST_MAX_ALIASES,
  MANIFEST_MAX_DEPTH,
  readManifest,
} from '../../cli/io/read-manifest.js';
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

const FAMILY = 'batch manifests (YAML, JSON)';
const { write } = scratch('manifests');

const nameArb = fc.stringMatching(/^[A-Za-z0-9][A-Za-z0-9._+-]{0,12}$/);
const inputArb = fc.stringMatching(/^[a-z][a-z0-9/_*.-]{0,20}$/);
const pos = fc.double({ min: 1e-3, max: 1e3, noNaN: true });

const jobArb = fc.oneof(
  fc.record(
    {
      name: nameArb,
      analysis: fc.constant('dm-fit'),
      input: inputArb,
      options: fc.record(
        {
          gap: pos,
          clip: pos,
          evolution: fc.integer({ min: 0, max: 5 }),
          scatter: fc.constantFrom('none', 'fixed', 'free'),
        },
        { requiredKeys: [] },
      ),
    },
    { requiredKeys: ['analysis', 'input'] },
  ),
  fc.record(
    {
      analysis: fc.constant('scatter-fit'),
      input: inputArb,
      options: fc.record(
        {
          model: fc.constantFrom('gauss', 'gauss2', 'gauss3'),
          refFreq: pos,
          alpha: fc.oneof(fc.constant('free'), pos),
        },
        { requiredKeys: [] },
      ),
    },
    { requiredKeys: ['analysis', 'input'] },
  ),
  fc.record(
    {
      analysis: fc.constant('scint'),
      input: inputArb,
      options: fc.record({ rfiFence: pos, c1: pos }, { requiredKeys: [] }),
    },
    { requiredKeys: ['analysis', 'input'] },
  ),
  fc.record({
    analysis: fc.constant('dm-refine'),
    input: inputArb,
    options: fc.constantFrom(
      { range: '21.30:21.42:0.0005' },
      { range: { lo: 1, hi: 2, step: 0.1 } },
    ),
  }),
);

const manifestArb = fc.record(
  { out: inputArb, jobs: fc.array(jobArb, { minLength: 1, maxLength: 6 }) },
  { requiredKeys: ['jobs'] },
);
const layoutArb = fc.constantFrom('yaml', 'json', 'yml');

const render = (m: unknown, layout: string) =>
  layout === 'json' ? JSON.stringify(m, null, 2) : toYaml(m);

function read(path: string) {
  return outcome(path, () => readManifest(path));
}

describe('manifests: valid files', () => {
  it('a generated manifest reads back with the jobs written, in YAML and JSON', async () => {
    await check(
      fc.property(manifestArb, layoutArb, (m, layout) => {
        tried(FAMILY);
        const path = write(`valid.${layout}`, render(m, layout));
        const got = readManifest(path);
        expect(got.jobs.map((j) => [j.analysis, j.input])).toEqual(
          m.jobs.map((j) => [j.analysis, j.input]),
        );
        expect(got.out).toBe(m.out);
      }),
      100,
    );
  });
});

describe('manifests: mutated files', () => {
  it('truncation, bit flips, inserted bytes, BOMs, CRLF: a manifest or a usage error naming the file', async () => {
    await check(
      fc.asyncProperty(manifestArb, layoutArb, mutationsArb, async (m, layout, ms) => {
        tried(FAMILY);
        const path = write(`mutated.${layout}`, mutateAll(utf8(render(m, layout)), ms));
        const r = await read(path);
        if (r.ok) expect(r.value.jobs.length).toBeGreaterThan(0);
      }),
      300,
    );
  });

  it('a JSON syntax error names its line and character; a schema error names the field', async () => {
    tried(FAMILY, 2);
    const bad = write('syntax.json', '{\n  "jobs": [\n    { "analysis": "dm-fit", }\n  ]\n}\n');
    expect((await rejects(bad, () => readManifest(bad))).message).toMatch(
      /syntax\.json:3:29: not valid JSON \(expected a property name/,
    );
    const field = write(
      'field.yaml',
      'jobs:\n  - analysis: dm-fit\n    input: a.csv\n    options: { gap: -1 }\n',
    );
    expect((await rejects(field, () => readManifest(field))).message).toMatch(
      /field\.yaml: invalid manifest: jobs\[0\]\.options\.gap: /,
    );
  });
});

describe('manifests: hostile inputs', () => {
  it('a billion-laughs alias bomb, and more aliases than the limit: a usage error (was a ReferenceError, exit 1)', async () => {
    const levels = ['a: &a [x, x, x, x, x, x, x, x, x]'];
    for (let k = 1; k < 9; k++) {
      const prev = String.fromCharCode(96 + k);
      const cur = String.fromCharCode(97 + k);
      levels.push(`${cur}: &${cur} [${new Array(9).fill(`*${prev}`).join(', ')}]`);
    }
    tried(FAMILY);
    const bomb = write('bomb.yaml', `${levels.join('\n')}\njobs: *i\n`);
    expect((await rejects(bomb, () => readManifest(bomb))).message).toMatch(
      new RegExp(`more than ${MANIFEST_MAX_ALIASES} times`),
    );
    // a legitimate use of an alias a few times is fine
    tried(FAMILY);
    const ok = write(
      'alias.yaml',
      'common: &c { gap: 0.5 }\njobs:\n  - { analysis: dm-fit, input: a.csv, options: *c }\n  - { analysis: dm-fit, input: b.csv, options: *c }\n',
    );
    const r = await read(ok);
    if (r.ok) throw new Error('unknown top-level key "common" should be refused');
    expect(r.error.message).toMatch(/common/);
  });

  it(`nesting deeper than ${MANIFEST_MAX_DEPTH}: 10⁵ flow brackets, 10⁴ block levels, deep JSON`, async () => {
    for (const [name, text] of [
      ['flow.yaml', `jobs: ${deepArrays(100_000)}\n`],
      ['flow-open.yaml', '['.repeat(100_000)],
      ['map.yaml', '{a: '.repeat(50_000)],
      ['block.yaml', `jobs:\n${'- '.repeat(10_000)}x\n`],
      [
        'indent.yaml',
        `jobs:\n${Array.from({ length: 2000 }, (_, i) => `${' '.repeat(i)}a${i}:`).join('\n')}\n`,
      ],
      ['deep.json', deepArrays(100_000)],
      ['deep-o.json', `{"jobs":${deepObjects(100_000)}}`],
    ]) {
      tried(FAMILY);
      const path = write(name, text);
      const r = await read(path);
      expect(r.ok).toBe(false);
    }
    // the same YAML twice in one process: the first parse must not leave the parser broken
    tried(FAMILY);
    const again = write('again.yaml', `jobs:\n${'- '.repeat(10_000)}x\n`);
    expect((await read(again)).ok).toBe(false);
  });

  it('huge keys and values: the zod message is capped (a 1 MB range text, 10⁴ unknown keys)', async () => {
    const cases: [string, unknown][] = [
      [
        'range.json',
        { jobs: [{ analysis: 'dm-refine', input: 'a', options: { range: 'x'.repeat(1 << 20) } }] },
      ],
      [
        'keys.json',
        {
          jobs: [
            {
              analysis: 'dm-fit',
              input: 'a',
              options: Object.fromEntries(Array.from({ length: 10_000 }, (_, i) => [`k${i}`, i])),
            },
          ],
        },
      ],
      ['bigkey.json', { jobs: [{ analysis: 'dm-fit', input: 'a', ['k'.repeat(1 << 20)]: 1 }] }],
      [
        'name.json',
        { jobs: [{ name: `../${'n'.repeat(1 << 20)}\n`, analysis: 'dm-fit', input: 'a' }] },
      ],
      [
        'many.json',
        { jobs: Array.from({ length: 5000 }, () => ({ analysis: 'nope', input: 'a' })) },
      ],
      ['types.json', { jobs: 'all' }],
      ['empty.json', { jobs: [] }],
      ['null.json', null],
    ];
    for (const [name, value] of cases) {
      tried(FAMILY);
      const path = write(name, JSON.stringify(value));
      expect((await read(path)).ok).toBe(false);
      tried(FAMILY);
      const ypath = write(name.replace('.json', '.yaml'), toYaml(value, { lineWidth: 0 }));
      expect((await read(ypath)).ok).toBe(false);
    }
  });

  it('NaN and Infinity text, YAML tags, NUL bytes, a 4 MB line, empty files', async () => {
    for (const [name, text] of [
      ['nan.json', '{"jobs":[{"analysis":"dm-fit","input":"a","options":{"gap":NaN}}]}'],
      ['nan.yaml', 'jobs:\n  - { analysis: dm-fit, input: a, options: { gap: .nan } }\n'],
      ['inf.yaml', 'jobs:\n  - { analysis: dm-fit, input: a, options: { gap: .inf } }\n'],
      ['huge.yaml', 'jobs:\n  - { analysis: dm-fit, input: a, options: { gap: 1e999 } }\n'],
      ['tag.yaml', 'jobs: !!js/function "function () {}"\n'],
      ['tag2.yaml', 'jobs:\n  - !<tag:yaml.org,2002:binary> aGVsbG8=\n'],
      ['nul.yaml', '\0'.repeat(4096)],
      [
        'long.yaml',
        `jobs:\n  - analysis: dm-fit\n    input: ${'a'.repeat(4 << 20)}\n    options: { gap: x }\n`,
      ],
      ['empty.yaml', ''],
      ['empty.json', ''],
      ['doc.yaml', '---\njobs: []\n---\njobs: []\n'],
    ]) {
      tried(FAMILY);
      const path = write(name, text);
      expect((await read(path)).ok).toBe(false);
    }
  });
});
