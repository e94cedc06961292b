// `sightline runs push` and `sightline baseline check` through the built binary against a real
// server, the way a pipeline and a CI job run them. Exit codes: interfaces.md (0 ok, 1 a check
// failed, 2 invalid input or refused token, 3 server unreachable).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { sightlineAsync as sightline, tempDir } from '../helpers/cli.js';
import { python, pythonAvailable } from '../helpers/python.js';
import { dmFit, quietFit } from '../helpers/results.js';
import { startTestServer, type TestServer } from '../helpers/server.js';

let t: TestServer;
const { dir, cleanup } = tempDir();
const tokens: Record<string, string> = {};
const file = (name: string, value: unknown) => {
  const p = join(dir, name);
  writeFileSync(p, JSON.stringify(value));
  return p;
};
const cli = async (who: string, args: string[], server?: string) =>
  await sightline(args, {
    env: { SIGHTLINE_SERVER: server ?? t.url, SIGHTLINE_TOKEN: tokens[who] ?? '' },
  });

beforeAll(async () => {
  t = await startTestServer('pglite', {
    ana: 'analyst',
    lead: 'lead',
    robot: 'viewer',
    admin: 'admin',
  });
  for (const who of ['ana', 'lead']) {
    const r = await t.http
      .post('/api/tokens')
      .set({ Cookie: t.people[who].cookie, Origin: t.url })
      .send({ name: 'pipeline' });
    tokens[who] = r.body.token;
  }
  // the CI job's robot: a viewer account whose token an admin made
  const r = await t.http
    .post('/api/tokens')
    .set({ Cookie: t.people.admin.cookie, Origin: t.url })
    .send({ name: 'ci', user_id: t.people.robot.id });
  tokens.robot = r.body.token;
  await t.http
    .post('/api/pulsars')
    .set({ Cookie: t.people.lead.cookie, Origin: t.url })
    .send({ name: 'SBP-B', is_reference: true });
}, 60_000);
afterAll(async () => {
  await t?.close();
  cleanup();
});

describe('sightline runs push', () => {
  it('pushes each file as a run, submits with --submit, prints ids and URLs', async () => {
    const a = file('b1.json', quietFit('SBP-B'));
    const b = file('c1.json', quietFit('SBP-C'));
    const r = await cli('ana', ['runs', 'push', a, b, '--submit', '--json']);
    expect(r.code).toBe(0);
    // notes for people on stderr; stdout is only the machine output
    expect(r.stderr).toMatch(/pushed .*b1\.json → run [0-9a-f-]{36} \(in_review\)/);
    const out = JSON.parse(r.stdout);
    expect(out.schema).toBe('sightline/push@1');
    expect(out.runs.map((x: { pulsar: string; state: string }) => [x.pulsar, x.state])).toEqual([
      ['SBP-B', 'in_review'],
      ['SBP-C', 'in_review'],
    ]);
    expect(out.runs[0].url).toBe(`${t.url}/runs/${out.runs[0].id}`);
    const table = await cli('ana', ['runs', 'push', a]);
    expect(table.code).toBe(0);
    expect(table.stdout).toMatch(/draft/);
    expect(table.stdout).toMatch(new RegExp(`${t.url}/runs/[0-9a-f-]{36}`));
  });

  it('checks every file first: a bad one stops the batch with exit 2, naming file and field', async () => {
    const before = (await t.http.get('/api/runs').set('Authorization', `Bearer ${tokens.ana}`)).body
      .total;
    const good = file('good.json', quietFit('SBP-A'));
    const broken = quietFit('SBP-A') as unknown as { visits: Record<string, unknown>[] };
    broken.visits[2].n_toas = 'many';
    const bad = file('bad.json', broken);
    const r = await cli('ana', ['runs', 'push', good, bad]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/bad\.json: .*visits\.2\.n_toas/);
    const after = (await t.http.get('/api/runs').set('Authorization', `Bearer ${tokens.ana}`)).body
      .total;
    expect(after).toBe(before);
    const notJson = join(dir, 'nope.json');
    writeFileSync(notJson, '{"schema": ');
    expect((await cli('ana', ['runs', 'push', notJson])).stderr).toMatch(/nope\.json: not JSON/);
  });

  it('exit 2 for a refused token or role, 3 when the server is unreachable', async () => {
    const a = file('b2.json', quietFit('SBP-B'));
    let r = await sightline(['runs', 'push', a], {
      env: { SIGHTLINE_SERVER: t.url, SIGHTLINE_TOKEN: 'sl_not-a-real-token-0123456789' },
    });
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/401 the API token is unknown/);
    r = await cli('robot', ['runs', 'push', a]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/403/);
    r = await cli('ana', ['runs', 'push', a], 'http://127.0.0.1:9');
    expect(r.code).toBe(3);
    expect(r.stderr).toMatch(/ECONNREFUSED|is the server running/);
    r = await sightline(['runs', 'push', a], {
      env: { SIGHTLINE_SERVER: '', SIGHTLINE_TOKEN: '' },
    });
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/no server/);
  });
});

describe('sightline baseline check', () => {
  let baselineFit: ReturnType<typeof quietFit>;

  beforeAll(async () => {
    // an approved run of the reference pulsar becomes its baseline
    baselineFit = quietFit('SBP-B');
    const made = await t.http
      .post('/api/runs')
      .set('Authorization', `Bearer ${tokens.ana}`)
      .send({ result: baselineFit, submit: true });
    const ok = await t.http
      .post(`/api/runs/${made.body.id}/reviews`)
      .set('Authorization', `Bearer ${tokens.lead}`)
      .send({ decision: 'approve', version: made.body.version });
    expect(ok.status).toBe(201);
  });

  it('exit 0 when every visit is within tolerance, with JUnit XML a CI system reads', async () => {
    const fresh = quietFit('SBP-B');
    fresh.visits[1].dm = (fresh.visits[1].dm as number) + 0.5e-4; // 0.5σ
    const junit = join(dir, 'ok.xml');
    const r = await cli('robot', [
      'baseline',
      'check',
      file('fresh-ok.json', fresh),
      '--junit',
      junit,
    ]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/PASS/);
    expect(existsSync(junit)).toBe(true);
    if (!pythonAvailable) return;
    // Python's xml.etree.ElementTree as the outside reader of the XML
    const parsed = python<{ tests: string; failures: string; cases: number }>(
      `import json,sys,xml.etree.ElementTree as ET
r=ET.fromstring(json.load(sys.stdin).encode())
print(json.dumps({"tests":r.get("tests"),"failures":r.get("failures"),"cases":len(r.findall(".//testcase"))}))`,
      readFileSync(junit, 'utf8'),
    );
    expect(parsed).toEqual({ tests: '6', failures: '0', cases: 6 });
  });

  it('exit 1 on a regression beyond the tolerance, naming the visit and the deviation', async () => {
    const fresh = quietFit('SBP-B');
    fresh.visits[3].dm = (fresh.visits[3].dm as number) + 4e-4; // 4σ of the baseline's σ = 1e-4
    const junit = join(dir, 'fail.xml');
    const r = await cli('robot', [
      'baseline',
      'check',
      file('fresh-bad.json', fresh),
      '--tolerance-sigma',
      '3',
      '--junit',
      junit,
    ]);
    expect(r.code).toBe(1);
    expect(r.stdout).toMatch(/FAIL/);
    expect(r.stdout).toMatch(/MJD 60242(\.\d+)? dm: .*\(4σ\)/);
    expect(r.stderr).toMatch(/moved beyond 3σ/);
    const xml = readFileSync(junit, 'utf8');
    expect(xml).toMatch(/failures="1"/);
    // a wider tolerance lets it pass
    const wide = await cli('robot', [
      'baseline',
      'check',
      join(dir, 'fresh-bad.json'),
      '--tolerance-sigma',
      '5',
    ]);
    expect(wide.code).toBe(0);
  });

  it('a missing visit is a regression; no baseline passes unless --require-baseline', async () => {
    const fewer = dmFit(
      'SBP-B',
      quietFit('SBP-B')
        .visits.slice(1)
        .map((v) => ({ mjd: v.mjd, dm: v.dm as number, dm_err: v.dm_err as number })),
    );
    expect((await cli('robot', ['baseline', 'check', file('fewer.json', fewer)])).code).toBe(1);
    const other = file('sbp-a.json', quietFit('SBP-A'));
    const r = await cli('robot', ['baseline', 'check', other, '--json']);
    expect(r.code).toBe(0);
    expect(JSON.parse(r.stdout).results[0].status).toBe('no_baseline');
    expect((await cli('robot', ['baseline', 'check', other, '--require-baseline'])).code).toBe(1);
  });

  it('invalid tolerance or file: exit 2, and no JUnit file is written', async () => {
    const junit = join(dir, 'never.xml');
    expect(
      (
        await cli('robot', [
          'baseline',
          'check',
          join(dir, 'fresh-ok.json'),
          '--tolerance-sigma',
          '-1',
          '--junit',
          junit,
        ])
      ).code,
    ).toBe(2);
    expect(
      (await cli('robot', ['baseline', 'check', join(dir, 'missing.json'), '--junit', junit])).code,
    ).toBe(3);
    expect(existsSync(junit)).toBe(false);
  });
});
