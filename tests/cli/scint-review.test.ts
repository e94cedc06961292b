// Scint results through the built binary against a real review server, the way a pipeline runs
// them: `sightline scint analyse` → `sightline runs push`, and `scint analyse --mask-from-server`
// starting from the interference channels the server remembers for the spectrum's receiver.
// Exit codes: interfaces.md (0 ok, 2 invalid input or refused token, 3 server unreachable).
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeNpy } from '../../shared/profiles/npy-write.js';
import { createRng } from '../../shared/sim/random.js';
import { simulateDynspec } from '../../shared/sim/scint.js';
import { sightlineAsync as sightline, tempDir } from '../helpers/cli.js';
import { startTestServer, type TestServer } from '../helpers/server.js';

const F0_MHZ = 1152.34375;
const DF_MHZ = 4.6875;
const NCHAN = 128;
const NSUB = 64;
/** the simulated interference block: strong, fluctuating, in every sub-integration */
const BLOCK = [40, 41, 42, 43];

let t: TestServer;
const { dir, cleanup } = tempDir();
const tokens: Record<string, string> = {};

/** A visit's dynamic spectrum (.npy + sidecar) with scintles and the interference block. */
function spectrum(name: string, seed: number, receiver?: string): string {
  const data = simulateDynspec(
    {
      nchan: NCHAN,
      nsub: NSUB,
      f0Mhz: F0_MHZ,
      dfMhz: DF_MHZ,
      dtS: 30,
      dnuDMhz: 20,
      dtDS: 400,
      flux: 1,
      noise: 0.3,
      persistent: { channels: BLOCK, level: 3 },
    },
    createRng(seed),
  );
  const path = join(dir, `${name}.npy`);
  writeFileSync(path, writeNpy(data, [NCHAN, NSUB]));
  writeFileSync(
    `${path}.json`,
    JSON.stringify({
      source: 'SBP-B',
      mjd: `6020${seed}.5`,
      ...(receiver ? { receiver } : {}),
      freqs_mhz: { start: F0_MHZ, step: DF_MHZ },
      times_s: { start: 0, step: 30 },
    }),
  );
  return path;
}

const env = (who: string, server = t.url) => ({
  SIGHTLINE_SERVER: server,
  SIGHTLINE_TOKEN: tokens[who] ?? '',
});
const cli = (who: string, args: string[], server?: string) =>
  sightline(args, { env: env(who, server) });
const api = async (path: string) =>
  (await t.http.get(path).set('Authorization', `Bearer ${tokens.ana}`)).body;

beforeAll(async () => {
  t = await startTestServer('pglite', { ana: 'analyst', admin: 'admin', robot: 'viewer' });
  const r = await t.http
    .post('/api/tokens')
    .set({ Cookie: t.people.ana.cookie, Origin: t.url })
    .send({ name: 'pipeline' });
  tokens.ana = r.body.token;
  // a robot with the viewer role: reading the remembered mask needs no more
  const v = await t.http
    .post('/api/tokens')
    .set({ Cookie: t.people.admin.cookie, Origin: t.url })
    .send({ name: 'reader', user_id: t.people.robot.id });
  tokens.robot = v.body.token;
}, 60_000);
afterAll(async () => {
  await t?.close();
  cleanup();
});

describe('scint results as correction runs', () => {
  it('analyses a dynamic spectrum and pushes the result as a scint run, stored whole', async () => {
    const out = join(dir, 'v1.scint.json');
    const a = await cli('ana', [
      'scint',
      'analyse',
      spectrum('v1', 1, 'mid'),
      '--json',
      '--out',
      out,
    ]);
    expect(a.code, a.stderr).toBe(0);
    const result = JSON.parse(readFileSync(out, 'utf8'));
    expect(result.schema).toBe('sightline/scint@1');
    expect(
      result.rfi.channels
        .filter((c: { kind: string }) => c.kind === 'persistent')
        .map((c: { channel: number }) => c.channel),
    ).toEqual(expect.arrayContaining(BLOCK));

    const p = await cli('ana', ['runs', 'push', out, '--json']);
    expect(p.code, p.stderr).toBe(0);
    const [run] = JSON.parse(p.stdout).runs;
    expect(run).toMatchObject({ kind: 'scint', pulsar: 'SBP-B', state: 'draft' });
    const back = await api(`/api/runs/${run.id}`);
    expect(back.result).toEqual(result);
    expect(back.summary).toMatchObject({ receiver: 'mid', status: result.status });
  });

  it('refuses a broken scint file before sending anything (exit 2, file and field named)', async () => {
    const broken = JSON.parse(readFileSync(join(dir, 'v1.scint.json'), 'utf8'));
    broken.rfi.flagged_fraction = 2;
    const path = join(dir, 'broken.scint.json');
    writeFileSync(path, JSON.stringify(broken));
    const before = (await api('/api/runs')).total;
    const r = await cli('ana', ['runs', 'push', path]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/broken\.scint\.json: .*rfi\.flagged_fraction/);
    expect((await api('/api/runs')).total).toBe(before);
  });
});

describe('scint analyse --mask-from-server', () => {
  it("starts from the receiver's remembered channels and records where they came from", async () => {
    // a second visit of the same receiver: the block is now persistent in two runs
    const out2 = join(dir, 'v2.scint.json');
    expect(
      (await cli('ana', ['scint', 'analyse', spectrum('v2', 2, 'mid'), '--json', '--out', out2]))
        .code,
    ).toBe(0);
    expect((await cli('ana', ['runs', 'push', out2])).code).toBe(0);
    const memory = await api('/api/rfi/mid');
    expect(memory.runs).toBe(2);
    expect(memory.channels_mhz).toEqual(BLOCK.map((c) => F0_MHZ + c * DF_MHZ));

    const out3 = join(dir, 'v3.scint.json');
    const r = await cli('robot', [
      'scint',
      'analyse',
      spectrum('v3', 3, 'mid'),
      '--mask-from-server',
      '--json',
      '--out',
      out3,
    ]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toMatch(/receiver mid: 4 channel\(s\) remembered from 2 scint run\(s\)/);
    const result = JSON.parse(readFileSync(out3, 'utf8'));
    expect(result.parameters.mask).toBe('server:mid');
    expect(result.parameters.mask_channels_mhz).toEqual(memory.channels_mhz);
    const given = result.rfi.channels.filter((c: { kind: string }) => c.kind === 'given');
    expect(given.map((c: { channel: number }) => c.channel)).toEqual(BLOCK);
  });

  it('is a usage error (exit 2) for a spectrum that names no receiver; nothing is written', async () => {
    const out = join(dir, 'none.scint.json');
    const r = await cli('ana', [
      'scint',
      'analyse',
      spectrum('none', 4),
      '--mask-from-server',
      '--out',
      out,
    ]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/none\.npy: --mask-from-server needs the dynamic spectrum's receiver/);
    expect(existsSync(out)).toBe(false);
  });

  it('exits 3 when the server cannot be reached and 2 when it refuses the token', async () => {
    const file = spectrum('v5', 5, 'mid');
    const out = join(dir, 'v5.scint.json');
    // port 9 (discard) on the loopback: nothing listens there in a test environment
    const down = await cli(
      'ana',
      ['scint', 'analyse', file, '--mask-from-server', '--out', out],
      'http://127.0.0.1:9',
    );
    expect(down.code).toBe(3);
    expect(down.stderr).toMatch(/127\.0\.0\.1:9.*is the server running/);
    const refused = await sightline(
      ['scint', 'analyse', file, '--mask-from-server', '--out', out],
      {
        env: { SIGHTLINE_SERVER: t.url, SIGHTLINE_TOKEN: 'sl_not_a_token' },
      },
    );
    expect(refused.code).toBe(2);
    expect(refused.stderr).toMatch(/GET \/api\/rfi\/mid: 401/);
    const unset = await sightline(['scint', 'analyse', file, '--mask-from-server', '--out', out], {
      env: { SIGHTLINE_SERVER: '', SIGHTLINE_TOKEN: '' },
    });
    expect(unset.code).toBe(2);
    expect(unset.stderr).toMatch(/no server: pass --server URL or set SIGHTLINE_SERVER/);
    const both = await cli('ana', [
      'scint',
      'analyse',
      file,
      '--mask-from-server',
      '--mask',
      join(dir, 'v1.scint.json'),
    ]);
    expect(both.code).toBe(2);
    expect(both.stderr).toMatch(/give one starting mask, not both/);
    expect(existsSync(out)).toBe(false);
  });
});
