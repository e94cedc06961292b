// `sightline batch` through the built binary on the demo data: results on a worker pool equal the
// single commands' results, resume skips unchanged jobs, failures do not stop the others, shards
// split the jobs, and `--push` sends results to a real review server (or leaves them pending).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { z } from 'zod';
import { sightline, sightlineAsync, tempDir } from '../helpers/cli.js';
import { startTestServer, type TestServer } from '../helpers/server.js';
import { batchLineSchema, type BatchLine } from '../../shared/schemas/batch.js';
import { dmFitResultSchema } from '../../shared/schemas/dm-fit.js';
import { dmRefineResultSchema } from '../../shared/schemas/dm-refine.js';
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
    expect(sightline(['batch', manifest(), '--shard', '3/2']).code).toBe(2);
    expect(sightline(['batch', manifest(), '--shard', '0/2']).code).toBe(2);
  }, 60_000);

  it('--shard 1/2 and 2/2 together cover every job exactly once', () => {
    const m = manifest();
    const one = sightline(['batch', m, '--shard', '1/2', '--out', join(dir, 's'), '--jobs', '2']);
    const two = sightline(['batch', m, '--shard', '2/2', '--out', join(dir, 's'), '--jobs', '2']);
    expect(one.code, one.stderr).toBe(0);
    expect(two.code, two.stderr).toBe(0);
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
    expect(r.stderr).toMatch(/push: 2 pushed · 0 pending · 1 dm-refine result\(s\) are not runs/);
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
});
