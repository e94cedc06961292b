// `sightline batch` through the built binary on the demo data: results on a worker pool equal the
// single commands' results, resume skips unchanged jobs, failures do not stop the others, shards
// split the jobs, and `--push` sends results to a real review server (or leaves them pending).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import {
  existsSync,
  mkdirSync,
  readdirSync,
  readFileSync,
  rmSync,
  utimesSync,
  writeFileSync,
} from 'node:fs';
import { basename, join } from 'node:path';
import type { z } from 'zod';
import { sightline, sightlineAsync, tempDir } from '../helpers/cli.js';
import { startGate, type Gate } from '../helpers/gate.js';
import { startTestServer, type TestServer } from '../helpers/server.js';
import { streamToas } from '../../cli/io/read-toas.js';
import { BATCH_ANALYSES, batchLineSchema, type BatchLine } from '../../shared/schemas/batch.js';
import { dmFitResultSchema } from '../../shared/schemas/dm-fit.js';
import { dmRefineResultSchema } from '../../shared/schemas/dm-refine.js';
import { dmSeriesResultSchema } from '../../shared/schemas/dm-series.js';
import { COMPARABLE_KINDS } from '../../shared/schemas/review.js';
import { scatterFitResultSchema } from '../../shared/schemas/scatter-fit.js';
import { scintResultSchema } from '../../shared/schemas/scint.js';

const { dir, cleanup } = tempDir('sightline-batch-');
const demo = join(dir, 'demo');
const CUBE = 'demo/cubes/SBP-B/SBP-B_60256.292431.npy';
const RANGE = '21.355:21.365:0.0005';

/** dm-fit on 3 arrival-time tables, scatter-fit on 2 profiles, scint on 2 spectra, 1 cube. */
const MANIFEST = `# the batch of the tests
out: results
jobs:
  - analysis: dm-fit
    input: demo/toas/SBP-[ABC].csv
  - analysis: scatter-fit
    input: demo/profiles/SBP-D/SBP-D_602[24]*.npy
  - analysis: scint
    input: demo/dynspec/SBP-B/SBP-B_602[01]*.npy
  - name: refine-b
    analysis: dm-refine
    input: ${CUBE}
    options: { range: "${RANGE}" }
`;
const EXPECTED = [
  'SBP-A.dm-fit.json',
  'SBP-B.dm-fit.json',
  'SBP-C.dm-fit.json',
  'SBP-D_60229.561597.scatter-fit.json',
  'SBP-D_60243.235706.scatter-fit.json',
  'SBP-B_60201.492917.scint.json',
  'SBP-B_60214.170845.scint.json',
  'refine-b.dm-refine.json',
];

const SCHEMAS: Record<string, z.ZodType> = {
  'dm-fit': dmFitResultSchema,
  'dm-series': dmSeriesResultSchema,
  'scatter-fit': scatterFitResultSchema,
  scint: scintResultSchema,
  'dm-refine': dmRefineResultSchema,
};

const write = (name: string, text: string) => {
  const p = join(dir, name);
  writeFileSync(p, text);
  return p;
};
const lines = (stdout: string): BatchLine[] =>
  stdout
    .trim()
    .split('\n')
    .filter(Boolean)
    .map((l) => batchLineSchema.parse(JSON.parse(l)));
const readJson = (p: string) => JSON.parse(readFileSync(p, 'utf8'));
/** the same run twice differs only in when it was made */
const timeless = (r: Record<string, unknown>) => ({ ...r, created_utc: undefined });

beforeAll(() => {
  const r = sightline(['demo', 'generate', '--out', demo, '--seed', '1']);
  expect(r.code, r.stderr).toBe(0);
}, 120_000);
afterAll(() => cleanup());

describe('sightline batch', () => {
  const manifest = () => write('batch.yaml', MANIFEST);
  const results = join(dir, 'results');

  it('runs every job on 2 workers; each result validates and equals the single command', () => {
    const r = sightline(['batch', manifest(), '--jobs', '2']);
    expect(r.code, r.stderr).toBe(0);
    const out = lines(r.stdout);
    expect(out.map((l) => `${l.job}.${l.analysis}.json`).sort()).toEqual([...EXPECTED].sort());
    expect(out.every((l) => l.status === 'done')).toBe(true);
    expect(r.stderr).toMatch(/8 job\(s\) · 8 done · 0 skipped · 0 failed/);
    const single: Record<string, string[]> = {
      'dm-fit': ['dm', 'fit'],
      'scatter-fit': ['scatter', 'fit'],
      scint: ['scint', 'analyse'],
      'dm-refine': ['dm', 'refine', '--range', RANGE],
    };
    for (const l of out) {
      const result = readJson(join(results, `${l.job}.${l.analysis}.json`));
      expect(SCHEMAS[l.analysis].safeParse(result).success).toBe(true);
      const alone = sightline([...single[l.analysis], l.input, '--json']);
      expect(alone.code, alone.stderr).toBe(0);
      expect(timeless(result)).toEqual(timeless(JSON.parse(alone.stdout)));
    }
  }, 180_000);

  it('skips every job on a second run, reruns all with --force, and reruns a changed job', () => {
    const again = sightline(['batch', manifest(), '--jobs', '2']);
    expect(again.code, again.stderr).toBe(0);
    expect(lines(again.stdout).map((l) => l.status)).toEqual(Array(8).fill('skipped'));
    const forced = sightline(['batch', manifest(), '--jobs', '2', '--force']);
    expect(forced.code, forced.stderr).toBe(0);
    expect(lines(forced.stdout).map((l) => l.status)).toEqual(Array(8).fill('done'));
    // new options for the cube: only that job runs again
    write('batch.yaml', MANIFEST.replace(RANGE, '21.355:21.366:0.0005'));
    const changed = sightline(['batch', join(dir, 'batch.yaml'), '--jobs', '2']);
    expect(changed.code, changed.stderr).toBe(0);
    const st = lines(changed.stdout);
    expect(st.filter((l) => l.status === 'done').map((l) => l.job)).toEqual(['refine-b']);
    expect(st.filter((l) => l.status === 'skipped')).toHaveLength(7);
  }, 180_000);

  it('a job with a bad input fails without stopping the others: exit 1, its message listed', () => {
    const bad = write('bad.csv', 'source,mjd,freq_mhz,err_us\nSBP-A,60000.1,1400,oops\n');
    const m = write(
      'bad.json',
      JSON.stringify({
        out: 'bad-results',
        jobs: [
          { analysis: 'dm-fit', input: 'bad.csv' },
          { analysis: 'dm-fit', input: 'demo/toas/SBP-A.csv' },
          { analysis: 'scint', input: 'demo/toas/missing.npy' },
        ],
      }),
    );
    const r = sightline(['batch', m, '--jobs', '2']);
    expect(r.code).toBe(1);
    const out = lines(r.stdout);
    expect(out.find((l) => l.input === bad)).toMatchObject({ status: 'failed' });
    expect(out.find((l) => l.input === bad)!.error).toMatch(/bad\.csv/);
    expect(out.find((l) => l.job === 'SBP-A')).toMatchObject({ status: 'done' });
    expect(out.find((l) => l.job === 'missing')).toMatchObject({ status: 'failed' });
    expect(r.stderr).toMatch(/failed:\n {2}bad \(dm-fit, .*bad\.csv\): .*bad\.csv/);
    expect(r.stderr).toMatch(/missing \(scint, .*missing\.npy\): .*no such file/);
    expect(existsSync(join(dir, 'bad-results', 'SBP-A.dm-fit.json'))).toBe(true);
    expect(existsSync(join(dir, 'bad-results', 'bad.dm-fit.json'))).toBe(false);
  }, 60_000);

  it('a job reading a failed job’s result is not run; one reading a good one runs after it', () => {
    write('bad.csv', 'source,mjd,freq_mhz,err_us\nSBP-A,60000.1,1400,oops\n');
    const m = write(
      'chain.yaml',
      [
        'out: chain-results',
        'jobs:',
        // listed first, so only the dependency makes it wait for the series
        '  - analysis: toas-correct',
        "    input: '{bad.csv,demo/toas/SBP-A.csv}'",
        "    options: { series: '{out}/{stem}.dm-series.json' }",
        '  - analysis: dm-series',
        "    input: '{bad.csv,demo/toas/SBP-A.csv}'",
      ].join('\n'),
    );
    const r = sightline(['batch', m, '--jobs', '2']);
    expect(r.code).toBe(1);
    const out = lines(r.stdout);
    expect(out.find((l) => l.job === 'bad' && l.analysis === 'toas-correct')).toMatchObject({
      status: 'failed',
      error: 'not run: it reads bad.dm-series.json, and job bad (dm-series) failed',
    });
    expect(out.find((l) => l.job === 'SBP-A' && l.analysis === 'toas-correct')).toMatchObject({
      status: 'done',
      out: expect.stringMatching(/SBP-A\.toas-correct\.csv$/),
    });
    expect(r.stderr).toMatch(/2 failed/);
  }, 60_000);

  it('a bad manifest exits 2 naming the file and the field; nothing runs', () => {
    const m = write(
      'wrong.json',
      JSON.stringify({
        out: 'never',
        jobs: [
          { analysis: 'dm-fit', input: 'demo/toas/SBP-A.csv' },
          { analysis: 'dm-fit', input: 'demo/toas/SBP-B.csv', options: { gap: -1 } },
        ],
      }),
    );
    const r = sightline(['batch', m]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/wrong\.json: invalid manifest: jobs\[1\]\.options\.gap: /);
    expect(r.stdout).toBe('');
    expect(existsSync(join(dir, 'never'))).toBe(false);
    const kind = write('kind.yaml', 'jobs:\n  - analysis: dm-fitt\n    input: x.csv\n');
    const k = sightline(['batch', kind]);
    expect(k.code).toBe(2);
    expect(k.stderr).toMatch(/kind\.yaml: invalid manifest: jobs\[0\]\.analysis: /);
    const unknown = write(
      'unknown.json',
      JSON.stringify({ jobs: [{ analysis: 'scint', input: 'x', options: { rfiFense: 2 } }] }),
    );
    const u = sightline(['batch', unknown]);
    expect(u.code).toBe(2);
    expect(u.stderr).toMatch(/jobs\[0\]\.options: .*rfiFense/);
    const none = write(
      'none.json',
      JSON.stringify({ jobs: [{ analysis: 'scint', input: '*.zz' }] }),
    );
    const n = sightline(['batch', none]);
    expect(n.code).toBe(2);
    expect(n.stderr).toMatch(/none\.json: jobs\[0\]\.input: "\*\.zz" matches no file/);
    const bad = (name: string, job: Record<string, unknown>, message: RegExp) => {
      const file = write(name, JSON.stringify({ out: 'never', jobs: [job] }));
      const b = sightline(['batch', file]);
      expect(b.code, b.stderr).toBe(2);
      expect(b.stderr).toMatch(message);
      expect(b.stdout).toBe('');
    };
    bad(
      'exclude.json',
      { analysis: 'dm-fit', input: 'demo/toas/*.csv', exclude: ['demo/toas/SBP-Z.csv'] },
      /exclude\.json: jobs\[0\]\.exclude\[0\]: "demo\/toas\/SBP-Z\.csv" matches none of the input's files/,
    );
    bad(
      'exclude-one.json',
      { analysis: 'dm-fit', input: 'demo/toas/SBP-A.csv', exclude: 'demo/toas/SBP-A.csv' },
      /jobs\[0\]\.exclude: goes with a glob input only/,
    );
    bad(
      'placeholder.json',
      {
        analysis: 'toas-correct',
        input: 'demo/toas/SBP-A.csv',
        options: { series: '{results}/{stem}.dm-series.json' },
      },
      /jobs\[0\]\.options\.series: unknown placeholder \{results\} \(known: \{out\}, \{stem\}\)/,
    );
    bad(
      'self.json',
      {
        name: 'self',
        analysis: 'toas-correct',
        input: 'demo/toas/SBP-A.csv',
        options: { series: '{out}/self.toas-correct.csv' },
      },
      /self\.json: jobs\[0\]: self\.toas-correct\.csv reads its own result/,
    );
    expect(existsSync(join(dir, 'never'))).toBe(false);
    expect(sightline(['batch', manifest(), '--shard', '3/2']).code).toBe(2);
    expect(sightline(['batch', manifest(), '--shard', '0/2']).code).toBe(2);
  }, 60_000);

  it('--shard 1/2 and 2/2 together cover every job exactly once', () => {
    const m = manifest();
    const one = sightline([
      ...['batch', m, '--shard', '1/2', '--out', join(dir, 's'), '--jobs', '2', '--quiet'],
    ]);
    const two = sightline(['batch', m, '--shard', '2/2', '--out', join(dir, 's'), '--jobs', '2']);
    expect(one.code, one.stderr).toBe(0);
    expect(two.code, two.stderr).toBe(0);
    // --quiet: no summary on stderr (the lines on stdout say everything)
    expect(one.stderr).toBe('');
    expect(two.stderr).toMatch(/^batch: 4 job\(s\) \(shard 2\/2 of 8\)/);
    const a = lines(one.stdout).map((l) => `${l.job}.${l.analysis}.json`);
    const b = lines(two.stdout).map((l) => `${l.job}.${l.analysis}.json`);
    expect(a).toHaveLength(4);
    expect(b).toHaveLength(4);
    expect([...a, ...b].sort()).toEqual([...EXPECTED].sort());
    expect(
      readdirSync(join(dir, 's'))
        .filter((f) => f.endsWith('.json'))
        .sort(),
    ).toEqual([...EXPECTED].sort());
  }, 120_000);
});

describe('sightline batch --push', () => {
  let t: TestServer;
  let token = '';
  const pushManifest = () =>
    write(
      'push.json',
      JSON.stringify({
        jobs: [
          { analysis: 'dm-fit', input: 'demo/toas/SBP-[AB].csv' },
          { analysis: 'dm-refine', input: CUBE, options: { range: RANGE } },
        ],
      }),
    );
  const runsTotal = async () =>
    (await t.http.get('/api/runs').set('Authorization', `Bearer ${token}`)).body.total as number;

  beforeAll(async () => {
    t = await startTestServer('pglite', { ana: 'analyst' });
    const r = await t.http
      .post('/api/tokens')
      .set({ Cookie: t.people.ana.cookie, Origin: t.url })
      .send({ name: 'pipeline' });
    token = r.body.token;
  }, 60_000);
  afterAll(async () => {
    await t?.close();
  });

  it('creates a run per pushable result', async () => {
    const before = await runsTotal();
    const out = join(dir, 'pushed');
    const r = await sightlineAsync(
      ['batch', pushManifest(), '--out', out, '--push', '--jobs', '2'],
      {
        env: { SIGHTLINE_SERVER: t.url, SIGHTLINE_TOKEN: token },
      },
    );
    expect(r.code, r.stderr).toBe(0);
    const fits = lines(r.stdout).filter((l) => l.analysis === 'dm-fit');
    expect(fits.map((l) => l.run_id)).toEqual([expect.any(String), expect.any(String)]);
    expect(await runsTotal()).toBe(before + 2);
    expect(r.stderr).toMatch(/push: 2 pushed · 0 pending · 1 result\(s\) stay local/);
    const run = await t.http
      .get(`/api/runs/${fits[0].run_id}`)
      .set('Authorization', `Bearer ${token}`);
    expect(run.status).toBe(200);
  }, 120_000);

  it('with the server unreachable the results go pending; runs push --pending sends them later', async () => {
    const out = join(dir, 'offline');
    // a port nothing listens on: the pushes fail after three tries
    const r = await sightlineAsync(['batch', pushManifest(), '--out', out, '--push'], {
      env: { SIGHTLINE_SERVER: 'http://127.0.0.1:9', SIGHTLINE_TOKEN: token },
    });
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toMatch(/push: 0 pushed · 2 pending/);
    expect(lines(r.stdout).filter((l) => l.pending)).toHaveLength(2);
    expect(readdirSync(join(out, '.pending')).sort()).toEqual([
      'SBP-A.dm-fit.json',
      'SBP-B.dm-fit.json',
    ]);
    const before = await runsTotal();
    const p = await sightlineAsync(['runs', 'push', '--pending', out, '--json'], {
      env: { SIGHTLINE_SERVER: t.url, SIGHTLINE_TOKEN: token },
    });
    expect(p.code, p.stderr).toBe(0);
    expect(JSON.parse(p.stdout).runs).toHaveLength(2);
    expect(await runsTotal()).toBe(before + 2);
    expect(readdirSync(join(out, '.pending'))).toEqual([]);
    // nothing left: a second call sends nothing
    const again = await sightlineAsync(['runs', 'push', '--pending', out, '--json'], {
      env: { SIGHTLINE_SERVER: t.url, SIGHTLINE_TOKEN: token },
    });
    expect(again.code).toBe(0);
    expect(JSON.parse(again.stdout).runs).toEqual([]);
    rmSync(out, { recursive: true, force: true });
  }, 120_000);

  it('a pending result whose job fails later is dropped, never sent', async () => {
    const own = join(dir, 'own');
    const out = join(dir, 'own-results');
    rmSync(own, { recursive: true, force: true });
    mkdirSync(own);
    writeFileSync(join(own, 'SBP-A.csv'), readFileSync(join(demo, 'toas', 'SBP-A.csv')));
    const m = write(
      'own.json',
      JSON.stringify({ out: 'own-results', jobs: [{ analysis: 'dm-fit', input: 'own/*.csv' }] }),
    );
    const offline = { SIGHTLINE_SERVER: 'http://127.0.0.1:9', SIGHTLINE_TOKEN: token };
    const r = await sightlineAsync(['batch', m, '--push'], { env: offline });
    expect(r.code, r.stderr).toBe(0);
    expect(readdirSync(join(out, '.pending'))).toEqual(['SBP-A.dm-fit.json']);
    // the table goes bad: the job fails, and its old result must not become a run later
    writeFileSync(join(own, 'SBP-A.csv'), 'source,mjd,freq_mhz,err_us\nSBP-A,60000.1,1400,-1\n');
    const failed = await sightlineAsync(['batch', m]);
    expect(failed.code).toBe(1);
    expect(failed.stderr).toMatch(/pending: 1 marker\(s\) dropped, their jobs failed this time/);
    expect(readdirSync(join(out, '.pending'))).toEqual([]);
    const before = await runsTotal();
    const p = await sightlineAsync(['runs', 'push', '--pending', out, '--json'], {
      env: { SIGHTLINE_SERVER: t.url, SIGHTLINE_TOKEN: token },
    });
    expect(p.code, p.stderr).toBe(0);
    expect(JSON.parse(p.stdout).runs).toEqual([]);
    expect(await runsTotal()).toBe(before);
  }, 60_000);
});

// The demo data set's own manifest (written by `sightline demo generate`) over the whole set:
// every pulsar, every analysis batch runs. The expected jobs are worked out here from the files
// of the demo folder, not from the manifest, so a job the manifest leaves out (or adds) shows.
describe('the demo manifest: all six pulsars, every analysis', () => {
  const manifestFile = join(demo, 'batch.yaml');
  const results = join(demo, 'batch-results');
  // demo-scenario handout: the six invented pulsars; the low receiver spans 550–900 MHz
  const PULSARS = ['SBP-A', 'SBP-B', 'SBP-C', 'SBP-D', 'SBP-E', 'SBP-F'];
  const LOW_MHZ = [550, 900];
  const stem = (f: string) => basename(f).replace(/\.[^.]+$/, '');
  const npys = (kind: string, p: string) =>
    readdirSync(join(demo, kind, p))
      .filter((f) => f.endsWith('.npy'))
      .sort();
  const nameOf = (l: BatchLine) => basename(l.out!);
  const doneOf = (ls: BatchLine[]) =>
    ls
      .filter((l) => l.status === 'done')
      .map(nameOf)
      .sort();

  /** result file name → what makes it and for which pulsar */
  let expected = new Map<string, { analysis: string; pulsar: string }>();
  let pushable: string[] = [];
  let t: TestServer;
  let gate: Gate;
  let token = '';
  const env = () => ({ SIGHTLINE_SERVER: gate.url, SIGHTLINE_TOKEN: token });
  const runsTotal = async (query = '') =>
    (await t.http.get(`/api/runs?page_size=1${query}`).set('Authorization', `Bearer ${token}`)).body
      .total as number;

  function plan(): Map<string, { analysis: string; pulsar: string }> {
    expect(readdirSync(join(demo, 'toas')).sort()).toEqual(PULSARS.map((p) => `${p}.csv`));
    const m = new Map<string, { analysis: string; pulsar: string }>();
    const add = (name: string, analysis: string, pulsar: string) => {
      expect(m.has(name), name).toBe(false);
      m.set(name, { analysis, pulsar });
    };
    for (const p of PULSARS) {
      add(`${p}.dm-fit.json`, 'dm-fit', p);
      add(`${p}.dm-series.json`, 'dm-series', p);
      add(`${p}.toas-correct.csv`, 'toas-correct', p);
      for (const f of npys('dynspec', p)) add(`${stem(f)}.scint.json`, 'scint', p);
      for (const f of npys('cubes', p)) add(`refine-${stem(f)}.dm-refine.json`, 'dm-refine', p);
    }
    // the scattered pulsars: a chromatic fit, and τ per visit; SBP-D's tails show only with the
    // low receiver (demo-scenario handout), so only its visits that used it are fitted
    for (const p of ['SBP-D', 'SBP-F']) {
      add(`chromatic-${p}.dm-fit.json`, 'dm-fit', p);
      for (const f of npys('profiles', p)) {
        const freqs = readJson(join(demo, 'profiles', p, `${f}.json`)).freqs_mhz as number[];
        const low = freqs.some((x) => x >= LOW_MHZ[0] && x <= LOW_MHZ[1]);
        if (p === 'SBP-F' || low) add(`${stem(f)}.scatter-fit.json`, 'scatter-fit', p);
      }
    }
    return m;
  }

  /** Check a result against its shared schema (the corrected table: the arrival-time checks). */
  async function pulsarsOf(analysis: string, file: string): Promise<string[]> {
    if (analysis === 'toas-correct') {
      const sources = new Set<string>();
      let corrections = 0;
      const summary = await streamToas(file, (row, raw) => {
        sources.add(row.source);
        const fields = raw as string[];
        if (Number.isFinite(Number(fields[fields.length - 3]))) corrections++;
      });
      expect(summary.header.columns.slice(-3)).toEqual([
        'dm_correction_us',
        'mjd_corrected',
        'residual_corrected_us',
      ]);
      const input = await streamToas(join(demo, 'toas', `${[...sources][0]}.csv`), () => {});
      expect(summary.rows).toBe(input.rows);
      expect(corrections).toBe(summary.rows);
      return [...sources];
    }
    const r = readJson(file);
    const parsed = SCHEMAS[analysis].safeParse(r);
    expect(parsed.success, `${file}: ${parsed.error?.message}`).toBe(true);
    const names: string[] =
      analysis === 'dm-fit'
        ? r.visits.map((v: { source: string }) => v.source)
        : analysis === 'dm-series'
          ? r.points.map((v: { source: string }) => v.source)
          : [r.source];
    return [...new Set(names)];
  }

  beforeAll(async () => {
    expected = plan();
    pushable = [...expected]
      .filter(([, e]) => (COMPARABLE_KINDS as readonly string[]).includes(e.analysis))
      .map(([name]) => name)
      .sort();
    t = await startTestServer('pglite', { ana: 'analyst' });
    gate = await startGate(t.url);
    const r = await t.http
      .post('/api/tokens')
      .set({ Cookie: t.people.ana.cookie, Origin: t.url })
      .send({ name: 'demo-batch' });
    token = r.body.token;
  }, 60_000);
  afterAll(async () => {
    await gate?.close();
    await t?.close();
  });

  it('runs on 2 workers: every planned job done, each result valid and naming its pulsar', async () => {
    const started = performance.now();
    const r = sightline(['batch', manifestFile, '--jobs', '2']);
    const wallS = (performance.now() - started) / 1000;
    expect(r.code, r.stderr).toBe(0);
    const out = lines(r.stdout);
    const n = expected.size;
    expect(r.stderr).toContain(`batch: ${n} job(s) · ${n} done · 0 skipped · 0 failed`);
    expect(out).toHaveLength(n);
    expect(out.map(nameOf).sort()).toEqual([...expected.keys()].sort());
    const covered = new Map<string, Set<string>>();
    for (const l of out) {
      const e = expected.get(nameOf(l))!;
      expect(l).toMatchObject({ status: 'done', analysis: e.analysis });
      expect(await pulsarsOf(l.analysis, join(results, nameOf(l)))).toEqual([e.pulsar]);
      expect(l.input).toContain(e.pulsar);
      if (!covered.has(l.analysis)) covered.set(l.analysis, new Set());
      covered.get(l.analysis)!.add(e.pulsar);
    }
    expect([...covered.keys()].sort()).toEqual([...BATCH_ANALYSES].sort());
    for (const a of ['dm-fit', 'dm-series', 'toas-correct', 'scint', 'dm-refine'])
      expect([...covered.get(a)!].sort(), a).toEqual(PULSARS);
    expect([...covered.get('scatter-fit')!].sort()).toEqual(['SBP-D', 'SBP-F']);
    // `seconds` is each job's own time on a worker, not its wait in the queue: on 2 workers the
    // jobs' times add up to at most twice the batch's whole run (with the wait included, they
    // added up to about half the job count times the whole run)
    const sumS = out.reduce((s, l) => s + l.seconds, 0);
    expect(sumS).toBeGreaterThan(0);
    expect(sumS).toBeLessThanOrEqual(2 * wallS);
  }, 600_000);

  it('a job of each kind that reads another job’s result equals its single command', () => {
    const catalogue = readJson(join(demo, 'pulsars.json'));
    const toas = join(demo, 'toas', 'SBP-E.csv');
    const series = join(results, 'SBP-E.dm-series.json');
    const alone = sightline([
      ...['dm', 'series', toas, '--smooth', 'gp', '--solar', String(catalogue.solar_n0_cm3)],
      ...['--positions', join(demo, 'pulsars.json'), '--json'],
    ]);
    expect(alone.code, alone.stderr).toBe(0);
    expect(timeless(readJson(series))).toEqual(timeless(JSON.parse(alone.stdout)));
    // the corrected arrival times, made from the batch's own series
    const corrected = join(dir, 'SBP-E.corrected.csv');
    const c = sightline(['toas', 'correct', toas, '--series', series, '--out', corrected]);
    expect(c.code, c.stderr).toBe(0);
    const batchRows = readFileSync(join(results, 'SBP-E.toas-correct.csv'), 'utf8').split('\n');
    const aloneRows = readFileSync(corrected, 'utf8').split('\n');
    expect(batchRows.length).toBeGreaterThan(800);
    expect(batchRows).toEqual(aloneRows);
    // SBP-F's scintillation beside τ from the scattering fit of the same visit
    const visit = stem(npys('dynspec', 'SBP-F')[3]);
    const tails = join(results, `${visit}.scatter-fit.json`);
    const spec = join(demo, 'dynspec', 'SBP-F', `${visit}.npy`);
    const s = sightline(['scint', 'analyse', spec, '--tails', tails, '--json']);
    expect(s.code, s.stderr).toBe(0);
    const scint = readJson(join(results, `${visit}.scint.json`));
    expect(scint.tau_from_tails.from).toBe(tails);
    expect(timeless(scint)).toEqual(timeless(JSON.parse(s.stdout)));
  }, 120_000);

  it('resumes: a rerun skips every job, also after a touch; a changed input or option reruns just its jobs', () => {
    const run = (m = manifestFile) => {
      const r = sightline(['batch', m, '--jobs', '2']);
      expect(r.code, r.stderr).toBe(0);
      const ls = lines(r.stdout);
      expect(ls).toHaveLength(expected.size);
      return ls;
    };
    // a new modification time, the same bytes: resume goes by content (SHA-256)
    const spec = join(demo, 'dynspec', 'SBP-B', npys('dynspec', 'SBP-B')[0]);
    const later = new Date(Date.now() + 3_600_000);
    utimesSync(spec, later, later);
    const again = run();
    expect(again.filter((l) => l.status !== 'skipped')).toEqual([]);
    // two inputs changed: one value of that dynamic spectrum (the lowest byte of its last
    // sample), so only its visit's scintillation runs again; and one arrival time's uncertainty
    // of SBP-C, so its fit and series run again, and its corrected arrival times, which read
    // both that table and the new series
    const original = readFileSync(spec);
    const changed = Buffer.from(original);
    changed[changed.length - 4] ^= 0x01;
    writeFileSync(spec, changed);
    const table = join(demo, 'toas', 'SBP-C.csv');
    const text = readFileSync(table, 'utf8');
    const rows = text.split('\n');
    const fields = rows[1].split(',');
    expect(rows[0].split(',')[3]).toBe('err_us');
    fields[3] = String(Number(fields[3]) * 2);
    rows[1] = fields.join(',');
    writeFileSync(table, rows.join('\n'));
    const rerun = [
      `${stem(spec)}.scint.json`,
      'SBP-C.dm-fit.json',
      'SBP-C.dm-series.json',
      'SBP-C.toas-correct.csv',
    ].sort();
    expect(doneOf(run())).toEqual(rerun);
    // back as they were: the same jobs again
    writeFileSync(spec, original);
    writeFileSync(table, text);
    expect(doneOf(run())).toEqual(rerun);
    // one option changed (the chromatic fits with α fixed): just those two jobs
    const variant = join(demo, 'batch-fixed-alpha.yaml');
    const manifest = readFileSync(manifestFile, 'utf8');
    expect(manifest).toContain('options: { scatter: free }');
    writeFileSync(
      variant,
      manifest.replace('options: { scatter: free }', 'options: { scatter: fixed, alpha: 4.1 }'),
    );
    const chromatic = ['chromatic-SBP-D.dm-fit.json', 'chromatic-SBP-F.dm-fit.json'];
    expect(doneOf(run(variant))).toEqual(chromatic);
    rmSync(variant);
    expect(doneOf(run())).toEqual(chromatic);
  }, 300_000);

  it('--shard 1/2 and 2/2 cover every job once, each job in the shard of the jobs it reads', () => {
    // the series made anew, so the corrections that read them must run after them, in their shard
    for (const p of PULSARS) rmSync(join(results, `${p}.dm-series.json`));
    // the second shard first: it cannot lean on the first one's results
    const two = sightline(['batch', manifestFile, '--jobs', '2', '--shard', '2/2']);
    const one = sightline(['batch', manifestFile, '--jobs', '2', '--shard', '1/2']);
    expect(two.code, two.stderr).toBe(0);
    expect(one.code, one.stderr).toBe(0);
    const shards = [lines(one.stdout), lines(two.stdout)];
    expect(shards[0].length).toBeGreaterThan(expected.size / 3);
    expect(shards[1].length).toBeGreaterThan(expected.size / 3);
    const names = [...shards[0], ...shards[1]].map(nameOf);
    expect(new Set(names).size).toBe(names.length);
    expect(names.sort()).toEqual([...expected.keys()].sort());
    const shardOf = new Map<string, number>();
    shards.forEach((ls, k) => ls.forEach((l) => shardOf.set(nameOf(l), k)));
    const remade = PULSARS.flatMap((p) => [`${p}.dm-series.json`, `${p}.toas-correct.csv`]);
    expect([...doneOf(shards[0]), ...doneOf(shards[1])].sort()).toEqual(remade.sort());
    for (const p of PULSARS)
      expect(shardOf.get(`${p}.toas-correct.csv`), p).toBe(shardOf.get(`${p}.dm-series.json`));
    for (const f of npys('dynspec', 'SBP-F'))
      expect(shardOf.get(`${stem(f)}.scint.json`), f).toBe(
        shardOf.get(`${stem(f)}.scatter-fit.json`),
      );
    // both halves hold both kinds of pair
    expect(new Set(PULSARS.map((p) => shardOf.get(`${p}.dm-series.json`))).size).toBe(2);
  }, 300_000);

  it('--push with a token the server refuses: exit 2 naming the refusal; the results wait as pending', async () => {
    await gate.mode('open');
    const r = await sightlineAsync(['batch', manifestFile, '--push', '--shard', '1/40'], {
      env: { SIGHTLINE_SERVER: gate.url, SIGHTLINE_TOKEN: 'not-a-token' },
    });
    expect(r.code, r.stderr).toBe(2);
    const out = lines(r.stdout);
    const mine = out.filter((l) => pushable.includes(nameOf(l)));
    expect(mine.length).toBeGreaterThan(3);
    expect(mine.every((l) => l.pending && !l.run_id)).toBe(true);
    expect(r.stderr).toMatch(
      /refused by http:\/\/127\.0\.0\.1:\d+:\n {2}\S+: POST \/api\/runs: 401/,
    );
    expect(r.stderr).toMatch(/push\(es\) refused by .*; the results wait in /);
    expect(readdirSync(join(results, '.pending')).sort()).toEqual(mine.map(nameOf).sort());
    expect(await runsTotal()).toBe(0);
  }, 120_000);

  it('with the server unreachable every pushable result stays pending; runs push --pending sends each once', async () => {
    await gate.mode('reset');
    const r = await sightlineAsync(['batch', manifestFile, '--push', '--jobs', '2'], {
      env: env(),
    });
    expect(r.code, r.stderr).toBe(0);
    const out = lines(r.stdout);
    expect(out.every((l) => l.status === 'skipped')).toBe(true);
    expect(
      out
        .filter((l) => l.pending)
        .map(nameOf)
        .sort(),
    ).toEqual(pushable);
    expect(out.filter((l) => l.run_id)).toEqual([]);
    expect(readdirSync(join(results, '.pending')).sort()).toEqual(pushable);
    expect(r.stderr).toContain(`push: 0 pushed · ${pushable.length} pending`);
    // once a push has failed its three tries, the others try once: three tries for at most the
    // four pushes in flight at first, one for each of the rest (not three for every result)
    expect(gate.connections).toBeGreaterThanOrEqual(pushable.length);
    expect(gate.connections).toBeLessThanOrEqual(pushable.length + 2 * 4);

    await gate.mode('open');
    const p = await sightlineAsync(['runs', 'push', '--pending', results, '--json'], {
      env: env(),
    });
    expect(p.code, p.stderr).toBe(0);
    const sent = JSON.parse(p.stdout).runs as {
      file: string;
      id: string;
      pulsar: string;
      kind: string;
    }[];
    expect(sent.map((s) => basename(s.file)).sort()).toEqual(pushable);
    for (const s of sent) {
      const e = expected.get(basename(s.file))!;
      expect({ pulsar: s.pulsar, kind: s.kind }).toEqual({ pulsar: e.pulsar, kind: e.analysis });
    }
    expect(readdirSync(join(results, '.pending'))).toEqual([]);
    // the runs through the API: all of them, and per pulsar and kind as many as results
    expect(await runsTotal()).toBe(pushable.length);
    const ids = new Set<string>();
    for (let page = 1; ids.size < pushable.length && page <= 10; page++) {
      const list = await t.http
        .get(`/api/runs?page_size=200&page=${page}`)
        .set('Authorization', `Bearer ${token}`);
      expect(list.status).toBe(200);
      for (const run of list.body.items as { id: string }[]) ids.add(run.id);
    }
    expect([...ids].sort()).toEqual(sent.map((s) => s.id).sort());
    for (const kind of COMPARABLE_KINDS)
      for (const pulsar of PULSARS) {
        const want = pushable.filter((n) => {
          const e = expected.get(n)!;
          return e.analysis === kind && e.pulsar === pulsar;
        }).length;
        expect(await runsTotal(`&pulsar=${pulsar}&kind=${kind}`), `${pulsar} ${kind}`).toBe(want);
      }
    const one = sent.find((s) => basename(s.file) === 'SBP-B.dm-fit.json')!;
    const run = await t.http.get(`/api/runs/${one.id}`).set('Authorization', `Bearer ${token}`);
    expect(run.status).toBe(200);
    expect(run.body.result.visits).toEqual(readJson(join(results, 'SBP-B.dm-fit.json')).visits);

    // nothing is sent twice: not by runs push --pending, not by a resumed batch --push
    const again = await sightlineAsync(['runs', 'push', '--pending', results, '--json'], {
      env: env(),
    });
    expect(again.code, again.stderr).toBe(0);
    expect(JSON.parse(again.stdout).runs).toEqual([]);
    const resumed = await sightlineAsync(['batch', manifestFile, '--push', '--jobs', '2'], {
      env: env(),
    });
    expect(resumed.code, resumed.stderr).toBe(0);
    const byName = new Map(sent.map((s) => [basename(s.file), s.id]));
    for (const l of lines(resumed.stdout).filter((l) => pushable.includes(nameOf(l))))
      expect(l).toMatchObject({
        status: 'skipped',
        already_pushed: true,
        run_id: byName.get(nameOf(l)),
      });
    expect(resumed.stderr).toContain(
      `push: 0 pushed · 0 pending · ${pushable.length} already on the server`,
    );
    expect(await runsTotal()).toBe(pushable.length);
  }, 600_000);

  it('a job skipped on resume whose push is still pending is pushed by the next batch --push', async () => {
    await gate.mode('closed');
    const spec = join(demo, 'dynspec', 'SBP-A', npys('dynspec', 'SBP-A')[5]);
    const name = `${stem(spec)}.scint.json`;
    const changed = readFileSync(spec);
    changed[changed.length - 4] ^= 0x01;
    writeFileSync(spec, changed);
    const down = await sightlineAsync(['batch', manifestFile, '--push', '--jobs', '2'], {
      env: env(),
    });
    expect(down.code, down.stderr).toBe(0);
    const first = lines(down.stdout);
    expect(doneOf(first)).toEqual([name]);
    expect(first.find((l) => nameOf(l) === name)).toMatchObject({ pending: true });
    expect(readdirSync(join(results, '.pending'))).toEqual([name]);
    expect(down.stderr).toContain(
      `push: 0 pushed · 1 pending · ${pushable.length - 1} already on the server`,
    );

    await gate.mode('open');
    const up = await sightlineAsync(['batch', manifestFile, '--push', '--jobs', '2'], {
      env: env(),
    });
    expect(up.code, up.stderr).toBe(0);
    const line = lines(up.stdout).find((l) => nameOf(l) === name)!;
    expect(line.status).toBe('skipped');
    expect(line.run_id).toEqual(expect.any(String));
    expect(line.pending).toBeUndefined();
    expect(line.already_pushed).toBeUndefined();
    expect(readdirSync(join(results, '.pending'))).toEqual([]);
    expect(up.stderr).toContain(
      `push: 1 pushed · 0 pending · ${pushable.length - 1} already on the server`,
    );
    expect(await runsTotal()).toBe(pushable.length + 1);
    const run = await t.http
      .get(`/api/runs/${line.run_id}`)
      .set('Authorization', `Bearer ${token}`);
    expect(run.body.result.mjd).toBe(readJson(join(results, name)).mjd);
    // nothing left over for runs push --pending
    const p = await sightlineAsync(['runs', 'push', '--pending', results, '--json'], {
      env: env(),
    });
    expect(JSON.parse(p.stdout).runs).toEqual([]);
    expect(await runsTotal()).toBe(pushable.length + 1);
  }, 300_000);

  it('demo generate knows a batched demo folder as its own (so --force may replace it)', () => {
    // the manifest and its results folder are the demo's own: the refusal asks for --force
    // instead of calling the folder foreign (which --force would not override)
    expect(existsSync(join(results, '.batch'))).toBe(true);
    const plain = sightline(['demo', 'generate', '--out', demo]);
    expect(plain.code).toBe(2);
    expect(plain.stderr).toMatch(/holds an earlier demo data set \(pass --force to replace it\)/);
    expect(plain.stderr).not.toMatch(/not a Sightline demo data set/);
    expect(existsSync(manifestFile)).toBe(true);
  });
});
