// Scint results (`sightline/scint@1`) as correction runs through the HTTP API: stored whole,
// summarised, exported as CSV, compared and checked against a baseline visit by visit; and the
// interference channels remembered per receiver (GET /api/rfi/:receiver). The server stores and
// counts here — the analysis itself is tested elsewhere — so the results are made once by the
// project's own analysis of a simulated spectrum and then varied by hand. Rules under test:
// interfaces.md "HTTP API" (roles), brief.md "Persistent RFI channels are remembered across runs
// per receiver", and the memory rule of shared/review/rfi-memory.ts (RFI_RULE).
import { parse } from 'csv-parse/sync';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { analyseDynspec } from '../../shared/scint/analyse.js';
import { dynspecFromArray } from '../../shared/scint/dynspec.js';
import { scintBody } from '../../shared/scint/result.js';
import { scintResultSchema, type ScintResult } from '../../shared/schemas/scint.js';
import { createRng } from '../../shared/sim/random.js';
import { simulateDynspec } from '../../shared/sim/scint.js';
import { quietFit } from '../helpers/results.js';
import { ENGINES, startTestServer, type TestServer } from '../helpers/server.js';

const F0_MHZ = 1152.34375;
const DF_MHZ = 4.6875;
const NCHAN = 128;
const NSUB = 64;
/** centre frequency of channel c of the simulated grid */
const ch = (c: number) => F0_MHZ + c * DF_MHZ;

/** One visit's dynamic spectrum with scintles and a persistent interference block, analysed. */
function analysed(seed: number, source: string, mjd: string, receiver?: string): ScintResult {
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
      persistent: { channels: [40, 41, 42, 43], level: 3 },
    },
    createRng(seed),
  );
  const ds = dynspecFromArray(data, NCHAN, NSUB, {
    source,
    mjd,
    ...(receiver ? { receiver } : {}),
    freqs_mhz: { start: F0_MHZ, step: DF_MHZ },
    times_s: { start: 0, step: 30 },
  });
  const opts = { fence: 1.5, pixelSigma: 5, c1: 1.16 };
  return scintResultSchema.parse({
    schema: 'sightline/scint@1',
    software: { name: 'sightline', version: '0.1.0' },
    parameters: { rfi_fence: 1.5, pixel_sigma: 5, c1: 1.16, mask: null },
    input: [{ path: `${source}_${mjd}.npy`, sha256: 'b'.repeat(64), rows: NCHAN }],
    ...scintBody(ds, analyseDynspec(ds, opts), opts),
  });
}

const clone = (r: ScintResult): ScintResult => structuredClone(r);

/** The same visit, with its scintles unresolved (as a strongly scattered pulsar's are). */
function unresolved(r: ScintResult): ScintResult {
  const u = clone(r);
  Object.assign(u, {
    status: 'unresolved',
    dnu_d_mhz: null,
    dnu_d_err_mhz: null,
    dt_d_s: null,
    dt_d_err_s: null,
    n_scintles: null,
    tau_us: null,
    tau_err_us: null,
    dnu_d_upper_mhz: u.channel_mhz,
    tau_lower_us: 1.16 / (2 * Math.PI * u.channel_mhz),
  });
  return scintResultSchema.parse(u);
}

type Kind = ScintResult['rfi']['channels'][number]['kind'];
/** A run of `receiver` at `mjd` whose flagged channels are exactly these [freq, kind] pairs. */
function withFlags(
  base: ScintResult,
  receiver: string,
  mjd: string,
  flags: [number, Kind][],
): ScintResult {
  const r = clone(base);
  r.receiver = receiver;
  r.mjd = mjd;
  r.rfi.channels = flags.map(([f, kind]) => ({
    channel: Math.round((f - F0_MHZ) / DF_MHZ),
    freq_mhz: f,
    kind,
  }));
  r.rfi.channels_flagged = r.rfi.channels.map((c) => c.channel);
  return scintResultSchema.parse(r);
}

describe.each(ENGINES)('scint runs on %s', (engine) => {
  let t: TestServer;
  let base: ScintResult;
  let viewerToken: string;
  const as = (who: string) => ({ Cookie: t.people[who].cookie, Origin: t.url });
  const post = (who: string, path: string, body: unknown) =>
    t.http
      .post(path)
      .set(as(who))
      .send(body as object);
  const get = (who: string, path: string) => t.http.get(path).set(as(who));
  const push = async (who: string, result: ScintResult, submit = false) => {
    const r = await post(who, '/api/runs', { result, submit });
    expect(r.status, r.text).toBe(201);
    return r.body as {
      id: string;
      version: number;
      kind: string;
      summary: Record<string, unknown>;
    };
  };

  beforeAll(async () => {
    base = analysed(11, 'SBP-B', '60229.565775', 'mid');
    // the premise of what follows: a measured visit with the injected block flagged persistent
    expect(base.status).toBe('measured');
    expect(base.rfi.channels.filter((c) => c.kind === 'persistent').map((c) => c.channel)).toEqual(
      expect.arrayContaining([40, 41, 42, 43]),
    );
    t = await startTestServer(engine);
    // SBP-B is the group's reference pulsar (demo-scenario.md)
    expect((await post('lead', '/api/pulsars', { name: 'SBP-B', is_reference: true })).status).toBe(
      201,
    );
    const tok = await post('admin', '/api/tokens', { name: 'reader', user_id: t.people.guest.id });
    expect(tok.status, tok.text).toBe(201);
    viewerToken = tok.body.token;
  }, 120_000);
  afterAll(() => t?.close());

  it('stores a pushed scint result whole (pictures included) and summarises it', async () => {
    const text = JSON.stringify(base);
    expect(text.length).toBeGreaterThan(100_000);
    const run = await push('ana', base);
    expect(run.kind).toBe('scint');
    expect(run.summary).toMatchObject({
      mjd: '60229.565775',
      receiver: 'mid',
      status: 'measured',
      dnu_d_mhz: base.dnu_d_mhz,
      dnu_d_err_mhz: base.dnu_d_err_mhz,
      dt_d_s: base.dt_d_s,
      dt_d_err_s: base.dt_d_err_s,
      tau_us: base.tau_us,
      tau_err_us: base.tau_err_us,
      tau_lower_us: null,
      flagged_fraction: base.rfi.flagged_fraction,
      n_channels_flagged: base.rfi.channels.length,
      freq_range_mhz: [base.freq_min_mhz, base.freq_max_mhz],
    });
    const back = await get('guest', `/api/runs/${run.id}`);
    expect(back.status).toBe(200);
    expect(back.body.result).toEqual(base);
    const json = await get('guest', `/api/runs/${run.id}/export?format=json`);
    expect(json.headers['content-disposition']).toMatch(/filename="SBP-B-scint-/);
    expect(JSON.parse(json.text)).toEqual(base);
    const list = await get('guest', '/api/runs?kind=scint&pulsar=SBP-B');
    expect(list.body.items.map((x: { id: string }) => x.id)).toContain(run.id);
    // a viewer reads but does not push
    expect((await post('guest', '/api/runs', { result: base })).status).toBe(403);
  });

  it('exports one CSV row per run with the main numbers and the flagged channels', async () => {
    const run = await push('ana', base);
    const csv = await get('guest', `/api/runs/${run.id}/export?format=csv`);
    expect(csv.status).toBe(200);
    expect(csv.headers['content-type']).toMatch(/text\/csv/);
    const rows = parse(csv.text, { columns: true }) as Record<string, string>[];
    expect(rows).toHaveLength(1);
    const row = rows[0];
    expect(row).toMatchObject({ source: 'SBP-B', mjd: '60229.565775', receiver: 'mid' });
    expect(row.status).toBe('measured');
    expect(Number(row.dnu_d_mhz)).toBe(base.dnu_d_mhz);
    expect(Number(row.dnu_d_err_mhz)).toBe(base.dnu_d_err_mhz);
    expect(Number(row.dt_d_s)).toBe(base.dt_d_s);
    expect(Number(row.tau_us)).toBe(base.tau_us);
    expect(Number(row.flagged_fraction)).toBe(base.rfi.flagged_fraction);
    const sorted = [...base.rfi.channels].sort((a, b) => a.channel - b.channel);
    expect(row.channels_flagged.split(';').map(Number)).toEqual(sorted.map((c) => c.channel));
    expect(row.channels_flagged_mhz.split(';').map(Number)).toEqual(sorted.map((c) => c.freq_mhz));
    expect(row.channels_flagged_kind.split(';')).toEqual(sorted.map((c) => c.kind));
    expect(row.tau_lower_us).toBe('');
  });

  it('summarises an unresolved visit by its limits', async () => {
    const u = unresolved(base);
    const run = await push('ben', u);
    expect(run.summary).toMatchObject({
      status: 'unresolved',
      dnu_d_mhz: null,
      tau_us: null,
      dnu_d_upper_mhz: u.channel_mhz,
      tau_lower_us: u.tau_lower_us,
    });
    const csv = await get('guest', `/api/runs/${run.id}/export?format=csv`);
    const [row] = parse(csv.text, { columns: true }) as Record<string, string>[];
    expect(row.dnu_d_mhz).toBe('');
    expect(Number(row.tau_lower_us)).toBe(u.tau_lower_us);
  });

  it('compares two analyses of one visit in σ: Δν_d, Δt_d and τ', async () => {
    const b = clone(base);
    b.dnu_d_mhz = (base.dnu_d_mhz as number) + 2 * (base.dnu_d_err_mhz as number);
    const ra = await push('ana', base);
    const rb = await push('ana', scintResultSchema.parse(b));
    const r = await get('guest', `/api/compare?a=${ra.id}&b=${rb.id}`);
    expect(r.status, r.text).toBe(200);
    expect(r.body.kind).toBe('scint');
    expect(r.body.items.map((i: { quantity: string }) => i.quantity)).toEqual([
      'dnu_d_mhz',
      'dt_d_s',
      'tau_ref_us',
    ]);
    // Δ = 2σ_a, σ = √2·σ_a (the same error on both sides) → z = √2 (hand computation)
    expect(r.body.items[0].z).toBeCloseTo(Math.SQRT2, 9);
    expect(r.body.items[1].z).toBe(0);
    expect(r.body.summary.moved[0].text).toMatch(/SBP-B MJD 60229\.5658: Δν_d moved \+1\.4σ/);

    // another visit matches nothing; an unresolved visit is listed, not compared
    const other = clone(base);
    other.mjd = '60243.529896';
    const ro = await push('ana', scintResultSchema.parse(other));
    const c2 = await get('guest', `/api/compare?a=${ra.id}&b=${ro.id}`);
    expect(c2.body.summary).toMatchObject({ n_matched: 0, n_a_only: 1, n_b_only: 1 });
    const ru = await push('ana', unresolved(base));
    const c3 = await get('guest', `/api/compare?a=${ra.id}&b=${ru.id}`);
    expect(c3.body.items).toEqual([]);
    expect(c3.body.not_compared).toEqual(['SBP-B MJD 60229.5658: unresolved in B']);
  });

  it('refuses to compare a scint run with another kind (400, never a crash)', async () => {
    const ra = await push('ana', base);
    const fit = await post('ana', '/api/runs', { result: quietFit('SBP-B') });
    expect(fit.status).toBe(201);
    const r = await get('guest', `/api/compare?a=${ra.id}&b=${fit.body.id}`);
    expect(r.status).toBe(400);
    expect(r.body.error).toMatchObject({
      code: 'kind_mismatch',
      message: 'cannot compare a scint result with a dm-fit result',
    });
  });

  it('makes an approved scint run of a reference pulsar its baseline and checks against it', async () => {
    const run = await push('ana', base, true);
    const ok = await post('lead', `/api/runs/${run.id}/reviews`, {
      decision: 'approve',
      version: run.version,
      comment: '',
    });
    expect(ok.status, ok.text).toBe(201);
    const bl = await get('guest', '/api/baselines');
    expect(bl.body.items).toContainEqual(
      expect.objectContaining({ pulsar: 'SBP-B', kind: 'scint', run_id: run.id }),
    );
    let check = await post('guest', '/api/baselines/check', { results: [base] });
    expect(check.status, check.text).toBe(200);
    expect(check.body.results[0]).toMatchObject({ kind: 'scint', status: 'pass', n_failed: 0 });
    // Δν_d moved by 4 of the baseline's σ: beyond the default 3σ
    const moved = clone(base);
    moved.dnu_d_mhz = (base.dnu_d_mhz as number) + 4 * (base.dnu_d_err_mhz as number);
    check = await post('guest', '/api/baselines/check', { results: [moved] });
    expect(check.body.pass).toBe(false);
    const failed = check.body.results[0].items.filter((i: { pass: boolean }) => !i.pass);
    expect(failed).toHaveLength(1);
    expect(failed[0].quantity).toBe('dnu_d_mhz');
    expect(failed[0].deviation_sigma).toBeCloseTo(4, 9);
  });

  it('remembers a receiver’s persistent channels by the documented rule', async () => {
    const A = ch(10);
    const B = ch(20);
    const C = ch(70);
    const E = ch(30);
    const D = ch(50);
    const F = ch(90);
    const rx = `high-${engine}`;
    // five runs of one receiver:
    //   A persistent in runs 1, 2, 4, given in run 3           → 3 of 4 tested: remembered
    //   B persistent in runs 1 and 2 (0.4 channel apart)      → 2 of 5: below half, forgotten
    //   C persistent in runs 3 and 5, given in run 1          → 2 of 4: exactly half, remembered
    //   E persistent in run 1 only (intermittent in run 2)    → 1 run: too few
    //   D dead in run 1                                       → never persistent
    //   F persistent in run 4 and 0.6 channel higher in run 5 → two different channels, 1 run each
    const runs: [number, Kind][][] = [
      [
        [A, 'persistent'],
        [B, 'persistent'],
        [E, 'persistent'],
        [D, 'dead'],
        [C, 'given'],
      ],
      [
        [A, 'persistent'],
        [B + 0.4 * DF_MHZ, 'persistent'],
        [E, 'intermittent'],
      ],
      [
        [A, 'given'],
        [C, 'persistent'],
      ],
      [
        [A, 'persistent'],
        [F, 'persistent'],
      ],
      [
        [C, 'persistent'],
        [F + 0.6 * DF_MHZ, 'persistent'],
      ],
    ];
    let memory = await get('guest', `/api/rfi/${rx}`);
    expect(memory.status).toBe(200);
    expect(memory.body).toMatchObject({ receiver: rx, runs: 0, channels_mhz: [], channels: [] });
    for (const [i, flags] of runs.entries())
      await push(i % 2 ? 'ben' : 'ana', withFlags(base, rx, `6030${i}.5`, flags));
    // a run without a receiver, and one of another receiver, change nothing here
    const anon = clone(base);
    anon.receiver = null;
    await push('ana', scintResultSchema.parse(anon));
    await push('ana', withFlags(base, `${rx}-other`, '60310.5', [[B, 'persistent']]));

    memory = await get('guest', `/api/rfi/${rx}`);
    expect(memory.status).toBe(200);
    expect(memory.body.runs).toBe(5);
    expect(memory.body.rule).toMatch(/at least 2 .* at least 50%/);
    expect(memory.body.channels_mhz).toEqual([A, C]);
    const by = (f: number) =>
      memory.body.channels.find((c: { freq_mhz: number }) => Math.abs(c.freq_mhz - f) < 1e-6);
    expect(by(A)).toMatchObject({ persistent_runs: 3, given_runs: 1, tested_runs: 4 });
    expect(by(A).share).toBeCloseTo(0.75, 12);
    expect(by(B + 0.2 * DF_MHZ)).toMatchObject({ persistent_runs: 2, tested_runs: 5 });
    expect(by(B + 0.2 * DF_MHZ).persistent).toBe(false);
    expect(by(C)).toMatchObject({ persistent_runs: 2, tested_runs: 4, share: 0.5 });
    expect(by(C).persistent).toBe(true);
    expect(by(E)).toMatchObject({ persistent_runs: 1, flagged_runs: 2, persistent: false });
    expect(by(D)).toMatchObject({ persistent_runs: 0, flagged_runs: 1, persistent: false });
    expect(by(F)).toMatchObject({ persistent_runs: 1, persistent: false });
    expect(by(F + 0.6 * DF_MHZ)).toMatchObject({ persistent_runs: 1, persistent: false });
    expect(memory.body.channels).toHaveLength(7);
  });

  it('answers GET /api/rfi/:receiver to any role or token, and 401 to nobody', async () => {
    await push('ana', withFlags(base, 'roles-rx', '60320.5', [[ch(5), 'persistent']]));
    for (const who of ['guest', 'ana', 'lead', 'admin']) {
      const r = await get(who, '/api/rfi/roles-rx');
      expect(r.status, who).toBe(200);
      expect(r.body.runs, who).toBe(1);
    }
    const robot = await t.http
      .get('/api/rfi/roles-rx')
      .set('Authorization', `Bearer ${viewerToken}`);
    expect(robot.status).toBe(200);
    const nobody = await t.http.get('/api/rfi/roles-rx');
    expect(nobody.status).toBe(401);
    expect(nobody.body.error.code).toBe('unauthenticated');
    const wrong = await t.http.get('/api/rfi/roles-rx').set('Authorization', 'Bearer sl_nope');
    expect(wrong.status).toBe(401);
    const long = await get('guest', `/api/rfi/${'x'.repeat(65)}`);
    expect(long.status).toBe(400);
    expect(long.body.error.details[0].path).toBe('receiver');
  });
});
