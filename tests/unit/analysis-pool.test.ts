import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { stringify } from 'csv-stringify/sync';
import { runDmFit, runDmSeries } from '../../cli/run/dm.js';
import { runScatter } from '../../cli/run/scatter.js';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { writeNpy } from '../../shared/profiles/npy-write.js';
import {
  analysisRequestSchema,
  dmFitResultSchema,
  dmSeriesResultSchema,
  scatterFitResultSchema,
  type AnalysisKind,
  type AnalysisRequestInput,
} from '../../shared/schemas/index.js';
import { simulateProfiles } from '../../shared/sim/profiles.js';
import { createRng } from '../../shared/sim/random.js';
import { simulateResidualVisit, type SimToa } from '../../shared/sim/visits.js';
import {
  AnalysisError,
  analysisTask,
  dmFitOptions,
  scatterFitOptions,
  type AnalysisTask,
} from '../../server/jobs/analyses.js';
import { createAnalysisPool, type AnalysisPool } from '../../server/jobs/pool.js';
import { tempDir } from '../helpers/cli.js';

// Every comparison here is internal consistency: the source is the CLI's own functions
// (cli/run/dm.ts runDmFit / runDmSeries, cli/run/scatter.ts runScatter) run in this process on
// the same file under its original name, with the options commander would hand them.

const { dir, cleanup } = tempDir('sightline-analysis-pool-');
const originals = join(dir, 'originals');
const uploads = join(dir, 'uploads');
let pool: AnalysisPool;

interface Upload {
  /** the file as the user had it, for the in-process CLI run */
  original: string;
  /** the stored copy, named by its SHA-256 with no extension, as the uploads route keeps it */
  filePath: string;
  fileName: string;
}

function upload(fileName: string, bytes: string | Uint8Array): Upload {
  const original = join(originals, fileName);
  writeFileSync(original, bytes);
  const filePath = join(uploads, createHash('sha256').update(bytes).digest('hex'));
  writeFileSync(filePath, bytes);
  return { original, filePath, fileName };
}

/** A task as the analyses route would make it: request validated, then the upload found. */
function task<K extends AnalysisKind>(
  kind: K,
  u: Upload,
  params: object = {},
): Extract<AnalysisTask, { kind: K }> {
  const request = analysisRequestSchema.parse({ kind, upload_id: 'u-1', params });
  return analysisTask(request, { filePath: u.filePath, fileName: u.fileName }) as Extract<
    AnalysisTask,
    { kind: K }
  >;
}

/** Everything but the run's clock, the build's version stamp and the input's path. */
function comparable(r: { created_utc?: string; software: unknown; input: object[] }) {
  const { created_utc: _c, software: _s, input, ...rest } = r;
  return { ...rest, input: input.map((i) => ({ ...i, path: '(path)' })) };
}

/** Arrival times of two invented pulsars: 24 visits of 10 frequencies each, DM wandering. */
function simulatedToas(): SimToa[] {
  const k = dispersionConstant('conventional');
  const rng = createRng(20240);
  const toas: SimToa[] = [];
  for (const source of ['SBP-C', 'SBP-E']) {
    for (let v = 0; v < 24; v++) {
      toas.push(
        ...simulateResidualVisit(
          k,
          {
            source,
            startMjd: 60300.2 + 14 * v,
            ddm: 2e-4 * Math.sin(v / 4),
            freqsMhz: [650, 720, 810, 900, 1100, 1300, 1450, 1650, 2300, 2900],
            errUs: [0.9, 0.8, 0.7, 0.6, 0.5, 0.5, 0.4, 0.4, 0.6, 0.8],
            offsetUs: 1.5,
          },
          rng,
        ),
      );
    }
  }
  return toas;
}

/** One visit's profiles in 8 bands, scattered with α = 4.0 (shared/sim/profiles.ts). */
function simulatedProfilesJson(): string {
  const bands = simulateProfiles(
    {
      nbin: 256,
      freqsMhz: [650, 720, 800, 900, 1000, 1150, 1300, 1500],
      tau1GhzPeriods: 0.02,
      alpha: 4.0,
      components: [{ area: 3000, phase: 0.35, width: 0.012 }],
      noise: 1,
    },
    createRng(77),
  );
  return JSON.stringify({
    source: 'SBP-D',
    mjd: '60412.5',
    period_s: 0.0051,
    profiles: bands.map((b) => ({ freq_mhz: b.freqMhz, bins: Array.from(b.bins) })),
  });
}

let toas: Upload;
let profiles: Upload;

beforeAll(() => {
  mkdirSync(originals);
  mkdirSync(uploads);
  toas = upload('visits.csv', stringify(simulatedToas(), { header: true }));
  profiles = upload('visit-profiles.json', simulatedProfilesJson());
  pool = createAnalysisPool({ maxThreads: 2 });
});

afterAll(async () => {
  await pool?.close();
  cleanup();
});

describe('analysis requests (shared/schemas/analysis.ts)', () => {
  const issuesOf = (body: AnalysisRequestInput | Record<string, unknown>) => {
    const r = analysisRequestSchema.safeParse(body);
    return r.success ? [] : r.error.issues.map((i) => i.path.join('.'));
  };

  it('takes each kind with or without params and leaves defaults to the command', () => {
    expect(analysisRequestSchema.parse({ kind: 'dm-fit', upload_id: 'a1' }).params).toEqual({});
    expect(
      analysisRequestSchema.parse({
        kind: 'scatter-fit',
        upload_id: 'b_2',
        params: { model: 'gauss2', alpha: 4.4 },
      }).params,
    ).toEqual({ model: 'gauss2', alpha: 4.4 });
    expect(issuesOf({ kind: 'dm-series', upload_id: 'c', params: { smooth: 'gp' } })).toEqual([]);
  });

  it('refuses out-of-range values, unknown keys and clashing options, naming the field', () => {
    const fit = (params: object) => issuesOf({ kind: 'dm-fit', upload_id: 'a', params });
    expect(fit({ clip_sigma: 0 })).toEqual(['params.clip_sigma']);
    expect(fit({ evolution: 6 })).toEqual(['params.evolution']);
    expect(fit({ evolution: 1.5 })).toEqual(['params.evolution']);
    expect(fit({ window_days: -3 })).toEqual(['params.window_days']);
    expect(fit({ period_s: Number.NaN })).toEqual(['params.period_s']);
    expect(fit({ window_days: 14, gap_days: 1 })).toEqual(['params.gap_days']);
    // as `sightline dm fit --alpha` without --scatter (cli/run/dm.ts fitOptions)
    expect(fit({ alpha: 4.4 })).toEqual(['params.scatter']);
    expect(fit({ scatter: 'fixed', alpha: 4.4, constant: 'physical' })).toEqual([]);
    expect(fit({ constant: 'metric' })).toEqual(['params.constant']);
    // options that name other files are not accepted from a request
    expect(
      issuesOf({ kind: 'scatter-fit', upload_id: 'a', params: { template: '/etc/passwd' } }),
    ).toEqual(['params']);
    expect(
      issuesOf({ kind: 'scatter-fit', upload_id: 'a', params: { model: 'template' } }),
    ).toEqual(['params.model']);
    expect(issuesOf({ kind: 'scatter-fit', upload_id: 'a', params: { alpha: 'fixed' } })).toEqual([
      'params.alpha',
    ]);
    expect(issuesOf({ kind: 'dm-fit', upload_id: '../../etc' })).toEqual(['upload_id']);
    expect(issuesOf({ kind: 'delay', upload_id: 'a' })).toEqual(['kind']);
  });

  it('maps params to the options commander gives the CLI commands, defaults included', () => {
    // cli/commands/dm.ts: --evolution defaults to 0, --scatter to none, --ref-freq to 1000
    expect(dmFitOptions({ window_days: 14, clip_sigma: 4 }, 'a.csv')).toEqual({
      window: 14,
      clip: 4,
      evolution: 0,
      scatter: 'none',
      refFreq: 1000,
      quiet: true,
      inputName: 'a.csv',
    });
    // cli/commands/scatter.ts: --model gauss, --alpha free, --ref-freq 1000
    expect(scatterFitOptions({}, 'p.json')).toEqual({
      model: 'gauss',
      alpha: 'free',
      refFreq: 1000,
      quiet: true,
      inputName: 'p.json',
    });
  });
});

describe('analysis pool (server/jobs/pool.ts, worker server/jobs/analysis-worker.ts)', () => {
  it('dm-fit on a worker equals runDmFit in this process, and names the upload, not its storage', async () => {
    const params = { window_days: 14, clip_sigma: 4, scatter: 'free' } as const;
    const [remote, local] = await Promise.all([
      pool.run(task('dm-fit', toas, params)),
      runDmFit(toas.original, {
        window: 14,
        clip: 4,
        scatter: 'free',
        evolution: 0,
        refFreq: 1000,
        quiet: true,
      }),
    ]);
    dmFitResultSchema.parse(remote);
    expect(remote.summary.n_fitted).toBeGreaterThan(40);
    expect(remote.visits[0].models?.map((m) => m.name)).toEqual([
      'dm_only',
      'alpha_fixed',
      'alpha_free',
    ]);
    expect(comparable(remote)).toEqual(comparable(local));
    expect(remote.input).toEqual([
      { path: 'visits.csv', sha256: local.input[0].sha256, rows: 480 },
    ]);
    expect(remote.software.name).toBe('sightline');
  });

  it('dm-series with GP smoothing on a worker equals runDmSeries in this process', async () => {
    const params = { smooth: 'gp', constant: 'physical' } as const;
    const [remote, local] = await Promise.all([
      pool.run(task('dm-series', toas, params)),
      runDmSeries(toas.original, { smooth: 'gp', constant: 'physical', evolution: 0, quiet: true }),
    ]);
    dmSeriesResultSchema.parse(remote);
    expect(remote.constant.name).toBe('physical');
    expect(remote.smooth?.length).toBeGreaterThan(0);
    expect(comparable(remote)).toEqual(comparable(local));
    expect(remote.input[0].path).toBe('visits.csv');
  });

  it('dm-series of an uploaded dm-fit result is told by the upload name, its stored copy having none', async () => {
    const fit = await pool.run(task('dm-fit', toas, { gap_days: 0.5 }));
    const json = upload('fit.json', JSON.stringify(fit));
    expect(json.filePath).not.toMatch(/\.json$/);
    const [remote, local] = await Promise.all([
      pool.run(task('dm-series', json)),
      runDmSeries(json.original, { smooth: 'none', evolution: 0, quiet: true }),
    ]);
    dmSeriesResultSchema.parse(remote);
    expect(comparable(remote)).toEqual(comparable(local));
    // the series of a finished fit lists the fit's own input
    expect(remote.input).toEqual(fit.input);
    // a finished fit cannot be regrouped (cli/run/dm.ts loadFit)
    await expect(pool.run(task('dm-series', json, { window_days: 14 }))).rejects.toMatchObject({
      code: 'invalid_input',
      message: expect.stringMatching(/^fit\.json is a finished DM fit/),
    });
  });

  it('scatter-fit on a worker equals runScatter in this process', async () => {
    const [remote, local] = await Promise.all([
      pool.run(task('scatter-fit', profiles, { model: 'gauss', alpha: 'free' })),
      runScatter(profiles.original, { model: 'gauss', alpha: 'free', refFreq: 1000, quiet: true }),
    ]);
    scatterFitResultSchema.parse(remote);
    expect(remote.power_law?.alpha_fixed).toBe(false);
    expect(remote.bands.filter((b) => b.status === 'fitted').length).toBeGreaterThan(3);
    expect(comparable(remote)).toEqual(comparable(local));
    expect(remote.input.map((i) => i.path)).toEqual(['visit-profiles.json']);
  });

  it('a bad row is invalid_input naming the upload, row and column, never the storage path', async () => {
    const text =
      'source,mjd,freq_mhz,err_us,residual_us\nX,60000.1,800,0.5,1\nX,60000.1,1400,0.5,2\nX,60000.1,2000,-0.5,3\n';
    const bad = upload('bad.csv', text);
    const err = await pool.run(task('dm-fit', bad)).then(
      () => undefined,
      (e: unknown) => e,
    );
    expect(err).toBeInstanceOf(AnalysisError);
    const body = (err as AnalysisError).toJSON();
    expect(body).toMatchObject({
      code: 'invalid_input',
      details: { file: 'bad.csv', row: 3, line: 4, column: 'err_us' },
    });
    expect(body.message).toMatch(/^bad\.csv: row 3, line 4: column "err_us": /);
    expect(body.message).not.toContain(bad.filePath);
    // the CLI names the same row and column (cli/run/dm.ts through cli/io/read-toas.ts)
    await expect(runDmFit(bad.original, { evolution: 0, quiet: true })).rejects.toMatchObject({
      location: { row: 3, line: 4, column: 'err_us' },
    });
  });

  it('bad profiles and a .npy without its sidecar are invalid_input too', async () => {
    const broken = upload('p.json', '{"source":"X","mjd":"60000","period_s":0.004,"profiles":[]}');
    await expect(pool.run(task('scatter-fit', broken))).rejects.toMatchObject({
      code: 'invalid_input',
      details: { file: 'p.json' },
    });
    const npy = upload('cube.npy', writeNpy(new Float64Array(2 * 64).fill(1), [2, 64], '<f8'));
    const err = (await pool
      .run(task('scatter-fit', npy))
      .catch((e: unknown) => e)) as AnalysisError;
    expect(err.code).toBe('invalid_input');
    expect(err.message).toMatch(/^cube\.npy: .*sidecar JSON/);
  });

  it('the worker checks params again: a task that skipped the request schema is refused', async () => {
    const sneaky = { ...task('dm-fit', toas), params: { evolution: 9 } };
    await expect(pool.run(sneaky)).rejects.toMatchObject({
      code: 'invalid_input',
      message: expect.stringMatching(/^params\.evolution: /),
    });
  });

  it('runs several analyses at once while the main thread keeps ticking', async () => {
    let ticks = 0;
    const timer = setInterval(() => ticks++, 2);
    const start = performance.now();
    const tasks = [
      pool.run(task('dm-fit', toas, { gap_days: 0.5, scatter: 'free' })),
      pool.run(task('scatter-fit', profiles, { model: 'gauss2' })),
      pool.run(task('dm-fit', toas, { window_days: 28, scatter: 'fixed', alpha: 4.0 })),
      pool.run(task('scatter-fit', profiles, { alpha: 4.4 })),
    ];
    let first: { ticks: number; ms: number } | undefined;
    const results = await Promise.all(
      tasks.map((t) =>
        t.then((r) => {
          first ??= { ticks, ms: performance.now() - start };
          return r;
        }),
      ),
    );
    clearInterval(timer);
    // Until the first task ends the main thread must have been free: a tick every few ms. Run on
    // this thread, the fits would block it and only the file reads would let a tick through (a
    // handful however long the fits take), so the bound scales with the time taken, not a clock.
    expect(first!.ticks).toBeGreaterThanOrEqual(Math.max(10, first!.ms / 20));
    const locals = await Promise.all([
      runDmFit(toas.original, {
        gap: 0.5,
        scatter: 'free',
        evolution: 0,
        refFreq: 1000,
        quiet: true,
      }),
      runScatter(profiles.original, { model: 'gauss2', alpha: 'free', refFreq: 1000, quiet: true }),
      runDmFit(toas.original, {
        window: 28,
        scatter: 'fixed',
        alpha: 4.0,
        evolution: 0,
        refFreq: 1000,
        quiet: true,
      }),
      runScatter(profiles.original, { model: 'gauss', alpha: 4.4, refFreq: 1000, quiet: true }),
    ]);
    results.forEach((r, i) => expect(comparable(r), `task ${i}`).toEqual(comparable(locals[i])));
  });

  it('a closed pool refuses work with a failed AnalysisError', async () => {
    const small = createAnalysisPool({ maxThreads: 1 });
    await small.close();
    await expect(small.run(task('dm-fit', toas))).rejects.toMatchObject({ code: 'failed' });
    expect(() => createAnalysisPool({ maxThreads: 0 })).toThrow(RangeError);
  });
});
