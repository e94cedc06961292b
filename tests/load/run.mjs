// `npm run load`: the review server's HTTP API under load, on the embedded database (PGlite) and
// on PostgreSQL, with and without scattering analyses running server-side.
//
//   node tests/load/run.mjs [--duration S] [--warmup S] [--pg URL] [--no-pglite]
//                           [--rate-scale F] [--out FILE] [--cpu-prof DIR]
//
// (`npm run load` builds the CLI, the server bundle and the web app first.) Method:
//   1. in a temporary folder, writes the fictional demo data set (`sightline demo generate
//      --seed 1`) and fits it through the real CLI: `dm fit --clip 5` and `dm series --smooth gp`
//      of all six pulsars, `scatter fit` of one visit of SBP-D and SBP-F (the same fits `npm
//      start` makes). Eight visits of SBP-D and SBP-F are turned from .npy + sidecar into JSON
//      profile sets (the layout an upload takes) for the server-side analyses;
//   2. per engine: a fresh data folder (and, for PostgreSQL, a fresh database made on the server
//      --pg or SIGHTLINE_TEST_DATABASE_URL names, dropped afterwards), `sightline demo seed`
//      (the team's accounts, the pulsars, robot tokens), then the built server
//      (`node dist/server/main.js --port 0 --host 127.0.0.1 --data-dir DIR`, as `npm run serve`
//      starts it, DATABASE_URL for PostgreSQL, request logs at the default level into a file)
//      with tests/load/loop-delay.mjs preloaded to record the main thread's event-loop delay;
//   3. seeds runs through the API: the 14 results pushed three times (42 runs) as the two
//      analysts with their tokens, half submitted; the lead approves the reference pulsar's fit
//      (a baseline) and returns one. The guest (viewer) signs in with e-mail and password: reads
//      use that session cookie, as the browser does; pushes use Ana's API token, as CI does;
//   4. what one request costs with nothing else running: 50 run-list reads, 50 run-page reads
//      and 50 pushes one after another; the latency, and the server's CPU time per request (all
//      threads, and the main thread alone, from /proc/PID/task);
//   5. the load: three autocannon instances at once, for --duration seconds (after a --warmup
//      whose figures are dropped); rates are multiplied by --rate-scale (default 1):
//        run list    GET /api/runs, 100 req/s, in turn pages 1–5 of 50, page 1 of 25, and the
//                    Runs screen's filters (kind, state, pulsar, kind + state), 50 a page;
//        run page    GET /api/runs/:id, 100 req/s, in turn the 42 seeded runs (fits, series,
//                    scattering; some with reviews and a baseline);
//        push        POST /api/runs, 20 req/s, Ana's token, the 14 results in turn as new draft
//                    runs (each body a complete result JSON, 6–128 kB, titled "load push N";
//                    the server has no uniqueness rule on runs, so every push is a new run);
//      Pacing: one connection per request per second (100 + 100 + 20 connections), each sending
//      one request per second at its own slot — slots spread evenly over the second — so
//      arrivals are steady, not the burst at the top of each second autocannon's per-connection
//      rate limit sends when all connections share one timer. The slots are set by moving each
//      connection's rate timer (autocannon internals, checked at start; tested with 9.0.0).
//      Latency is each response's time from request written to response complete (autocannon's
//      'response' event, sub-millisecond); percentiles are nearest-rank over all responses.
//      autocannon's coordinated-omission correction is off: with a request rate its correction
//      assumes 1 ms between requests (it divides 1 by the per-connection rate in req/s) and fills
//      the histogram with invented samples. A connection sends its next request only after the
//      previous response (at most one outstanding each, 220 in all): a server that cannot keep
//      up gets fewer requests than the target, which the achieved req/s shows, and the latency
//      is then the time spent queued behind the other connections' requests. A request still
//      unanswered after 10 s counts as an error (timeout). After each run the script waits
//      until a health check (one database round trip) answers within 100 ms, so a backlog the
//      server is still working through does not spill into the next run (drain_s);
//   6. phase "idle": the load alone. Phase "analyses": the same load while `scatter-fit` jobs
//      keep the server's analysis worker pool busy — POST /api/analyses on the uploaded profile
//      sets (models gauss, gauss2, gauss3 in turn), always 4 × (pool threads) + 4 jobs in flight
//      (the pool has CPUs − 1 threads, the server's default), so the job queue (pg-boss, in the
//      database) never runs dry even when every HTTP call waits for seconds; the server's own
//      worker takes them one per pool thread. All of them are polled once a second with one
//      GET /api/analyses (not counted in the figures). Measuring starts once the first job has
//      finished (the pool's thread is up); the jobs finished within the phase are counted. Per
//      phase: the server process's CPU (all threads, the main thread, and the busiest other
//      thread — the analysis worker when analyses run — from /proc/PID/task; and how long the
//      main thread was ready to run but waiting for a CPU, from its schedstat), the main thread's
//      event-loop delay (p50/p99/max of a 10 ms timer's interval: 10 ms is a free loop), this
//      process's CPU, the machine's busy cores and load;
//   7. prints a table per engine (requests, req/s achieved, p50, p99, max, errors and non-2xx),
//      the cost per request and the targets (no errors; read p99 < 100 ms; the rates reached),
//      writes tests/load/results.json (or --out) with the machine described, stops the server
//      and removes the temporary folder (also on Ctrl-C).
//
// A benchmark, not a test: it exits non-zero only when a step fails (exit 2 for bad options);
// missed targets are reported. The client shares the machine with the server: on 2 cores the
// load generator, the server's main thread, its analysis thread and PostgreSQL compete.
import { execFileSync, spawn } from 'node:child_process';
import {
  closeSync,
  existsSync,
  mkdirSync,
  mkdtempSync,
  openSync,
  readdirSync,
  readFileSync,
  rmSync,
  writeFileSync,
} from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { setTimeout as sleep } from 'node:timers/promises';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { parseArgs } from 'node:util';
import autocannon from 'autocannon';
import pg from 'pg';

const ROOT = fileURLToPath(new URL('../../', import.meta.url));
const HERE = path.join(ROOT, 'tests/load');
const BIN = path.join(ROOT, 'bin/sightline');
const SERVER = path.join(ROOT, 'dist/server/main.js');
const LOOP_PRELOAD = path.join(HERE, 'loop-delay.mjs');

const BASE_RATES = { list: 100, page: 100, push: 20 };
const READ_P99_TARGET_MS = 100;
const POLL_MS = 1000;
const SERIAL_N = 50;
const SCATTER_MODELS = ['gauss', 'gauss2', 'gauss3'];
const DEMO_PASSWORD_FILE = 'demo-sign-ins.json';
const ANA = 'ana@saltbush.test';
const BEN = 'ben@saltbush.test';
const LEAD = 'lead@saltbush.test';
const GUEST = 'guest@saltbush.test';

// ── options ──────────────────────────────────────────────────────────────────────────────────

const USAGE = `usage: node tests/load/run.mjs [--duration S] [--warmup S] [--pg URL] [--no-pglite]
                           [--rate-scale F] [--out FILE] [--cpu-prof DIR]
  --duration S   seconds of load per phase (default 60)
  --warmup S     seconds of load before the first phase, not counted (default 5)
  --pg URL       PostgreSQL server (a role that may CREATE DATABASE) for the second engine;
                 default: SIGHTLINE_TEST_DATABASE_URL; without either, PGlite only
  --no-pglite    skip the embedded database
  --rate-scale F multiply every rate by F (default 1: 100 + 100 reads/s, 20 pushes/s)
  --out FILE     where the results go (default tests/load/results.json)
  --cpu-prof DIR write V8 CPU profiles of the server (node --cpu-prof) into DIR`;

function usage(message) {
  process.stderr.write(`load: ${message}\n${USAGE}\n`);
  process.exit(2);
}

let opts;
try {
  opts = parseArgs({
    options: {
      duration: { type: 'string' },
      warmup: { type: 'string' },
      pg: { type: 'string' },
      'no-pglite': { type: 'boolean' },
      'cpu-prof': { type: 'string' },
      'rate-scale': { type: 'string' },
      out: { type: 'string' },
      help: { type: 'boolean', short: 'h' },
    },
  }).values;
} catch (e) {
  usage(e.message);
}
if (opts.help) {
  process.stdout.write(USAGE + '\n');
  process.exit(0);
}
const seconds = (name, raw, fallback, min) => {
  if (raw === undefined) return fallback;
  const v = Number(raw);
  if (!Number.isInteger(v) || v < min)
    usage(`--${name} must be a whole number ≥ ${min}, not "${raw}"`);
  return v;
};
const DURATION = seconds('duration', opts.duration, 60, 1);
const SCALE = opts['rate-scale'] === undefined ? 1 : Number(opts['rate-scale']);
if (!(SCALE > 0 && SCALE <= 10)) usage(`--rate-scale must be a number above 0 and at most 10`);
/** requests per second; each stream has one connection per request per second */
const RATES = Object.fromEntries(
  Object.entries(BASE_RATES).map(([k, v]) => [k, Math.max(1, Math.round(v * SCALE))]),
);
const WARMUP = seconds('warmup', opts.warmup, 5, 0);
const PG_ADMIN_URL = opts.pg ?? (process.env.SIGHTLINE_TEST_DATABASE_URL || undefined);
if (PG_ADMIN_URL !== undefined) {
  try {
    const u = new URL(PG_ADMIN_URL);
    if (!/^postgres(ql)?:$/.test(u.protocol)) throw new Error('not a postgres:// URL');
  } catch (e) {
    usage(`--pg: ${e.message}`);
  }
}
const RESULTS = opts.out ? path.resolve(opts.out) : path.join(HERE, 'results.json');
const ENGINES = [...(opts['no-pglite'] ? [] : ['pglite']), ...(PG_ADMIN_URL ? ['postgres'] : [])];
if (!ENGINES.length)
  usage('--no-pglite needs a PostgreSQL server: --pg URL or SIGHTLINE_TEST_DATABASE_URL');
if (!existsSync(SERVER) || !existsSync(path.join(ROOT, 'dist/cli/main.js')))
  usage('the server is not built: run `npm run load` (or `npm run build` first)');

// ── clean-up, also on Ctrl-C ─────────────────────────────────────────────────────────────────

const log = (text) => process.stderr.write(`load: ${text}\n`);
const cleanups = [];
const trackers = new Set();
let aborting = false;

async function cleanUp() {
  for (const t of trackers) t.stop();
  while (cleanups.length) {
    const fn = cleanups.pop();
    try {
      await fn();
    } catch (e) {
      log(`clean-up: ${e.message}`);
    }
  }
}

async function abort(code, message) {
  if (aborting) return;
  aborting = true;
  if (message) log(message);
  await cleanUp();
  process.exit(code);
}

for (const signal of ['SIGINT', 'SIGTERM'])
  process.on(signal, () => void abort(130, `${signal}: stopping the server and cleaning up`));
process.on('uncaughtException', (e) => void abort(1, `failed: ${e.stack ?? e}`));
process.on('unhandledRejection', (e) => void abort(1, `failed: ${e?.stack ?? e}`));

const workDir = mkdtempSync(path.join(os.tmpdir(), 'sightline-load-'));
cleanups.push(() => rmSync(workDir, { recursive: true, force: true }));

// ── helpers ──────────────────────────────────────────────────────────────────────────────────

/** Run the Sightline CLI as a process; `written`: exit 1 with that file written is a result. */
function sightline(args, { env = {}, written } = {}) {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, [BIN, ...args], {
      stdio: ['ignore', 'pipe', 'pipe'],
      env: { ...process.env, ...env },
    });
    let out = '';
    let err = '';
    child.stdout.setEncoding('utf8').on('data', (c) => (out += c));
    child.stderr.setEncoding('utf8').on('data', (c) => (err += c));
    child.on('error', reject);
    child.on('close', (code, signal) => {
      if (code === 0 || (code === 1 && written && existsSync(written))) resolve(out);
      else
        reject(
          new Error(`sightline ${args.join(' ')} exited with ${code ?? signal}: ${err.trim()}`),
        );
    });
  });
}

/** A JSON call to the API; throws unless the status is the one expected. */
async function api(base, method, route, { token, cookie, body, expect = [200] } = {}) {
  const send = () =>
    fetch(base + route, {
      method,
      headers: {
        ...(token ? { authorization: `Bearer ${token}` } : {}),
        ...(cookie ? { cookie } : {}),
        ...(body !== undefined ? { 'content-type': 'application/json' } : {}),
      },
      body: body === undefined ? undefined : JSON.stringify(body),
      signal: AbortSignal.timeout(60_000),
    });
  let r;
  try {
    r = await send();
  } catch (e) {
    // a kept-alive connection the server closed while idle (5 s): the request never got there
    if (e?.cause?.code !== 'UND_ERR_SOCKET') throw e;
    r = await send();
  }
  const text = await r.text();
  if (!expect.includes(r.status))
    throw new Error(`${method} ${route}: ${r.status} ${text.slice(0, 300)}`);
  return text ? JSON.parse(text) : null;
}

/** Nearest-rank percentile of an ascending array. */
function percentile(sorted, p) {
  if (!sorted.length) return null;
  return sorted[Math.min(sorted.length - 1, Math.max(0, Math.ceil((p / 100) * sorted.length) - 1))];
}

const round = (x, digits = 1) => (x === null ? null : Number(x.toFixed(digits)));

/** A little-endian float32/float64 C-order 2-D .npy, as the demo writes them. */
function readNpy2d(file) {
  const buf = readFileSync(file);
  if (buf.subarray(0, 6).toString('latin1') !== '\x93NUMPY') throw new Error(`${file}: not .npy`);
  const major = buf[6];
  const headerLen = major === 1 ? buf.readUInt16LE(8) : buf.readUInt32LE(8);
  const start = (major === 1 ? 10 : 12) + headerLen;
  const header = buf.subarray(major === 1 ? 10 : 12, start).toString('latin1');
  const descr = /'descr':\s*'([^']+)'/.exec(header)?.[1];
  const fortran = /'fortran_order':\s*True/.test(header);
  const shape = /'shape':\s*\((\d+),\s*(\d+)\)/.exec(header);
  if (!shape || fortran || (descr !== '<f4' && descr !== '<f8'))
    throw new Error(`${file}: expected a C-order 2-D <f4 or <f8 array, header ${header.trim()}`);
  const [rows, cols] = [Number(shape[1]), Number(shape[2])];
  const size = descr === '<f4' ? 4 : 8;
  const data = buf.subarray(start);
  if (data.length !== rows * cols * size) throw new Error(`${file}: data length does not match`);
  return Array.from({ length: rows }, (_, i) =>
    Array.from({ length: cols }, (_, j) =>
      size === 4 ? data.readFloatLE((i * cols + j) * 4) : data.readDoubleLE((i * cols + j) * 8),
    ),
  );
}

// ── /proc: CPU of the server, this process and the machine ───────────────────────────────────

const CLK_TCK = (() => {
  try {
    return Number(execFileSync('getconf', ['CLK_TCK'], { encoding: 'utf8' }).trim()) || 100;
  } catch {
    return 100;
  }
})();

/** utime + stime in seconds from a /proc/.../stat line (the name may hold spaces). */
function statCpu(file) {
  try {
    const text = readFileSync(file, 'utf8');
    const f = text.slice(text.lastIndexOf(')') + 2).split(' ');
    return (Number(f[11]) + Number(f[12])) / CLK_TCK;
  } catch {
    return null;
  }
}

/** The server's CPU: all threads, its main thread, and per thread name. */
function serverCpu(pid) {
  const threads = {};
  let dir = [];
  try {
    dir = readdirSync(`/proc/${pid}/task`);
  } catch {
    // not Linux, or gone
  }
  for (const tid of dir) {
    let name = '?';
    try {
      name = readFileSync(`/proc/${pid}/task/${tid}/comm`, 'utf8').trim();
    } catch {
      // thread ended
    }
    const cpu = statCpu(`/proc/${pid}/task/${tid}/stat`);
    if (cpu === null) continue;
    threads[String(tid) === String(pid) ? 'main' : `${name}#${tid}`] = cpu;
  }
  return {
    total: statCpu(`/proc/${pid}/stat`),
    main: threads.main ?? null,
    mainWait: runQueueWait(`/proc/${pid}/task/${pid}/schedstat`),
    threads,
  };
}

/** Seconds a thread spent runnable but waiting for a CPU (/proc/.../schedstat, 2nd field). */
function runQueueWait(file) {
  try {
    return Number(readFileSync(file, 'utf8').trim().split(/\s+/)[1]) / 1e9;
  } catch {
    return null;
  }
}

function machineCpu() {
  try {
    const f = readFileSync('/proc/stat', 'utf8').split('\n')[0].trim().split(/\s+/).slice(1);
    const v = f.map(Number);
    const idle = v[3] + (v[4] ?? 0);
    const total = v.reduce((a, b) => a + b, 0);
    return { busy: (total - idle) / CLK_TCK, total: total / CLK_TCK };
  } catch {
    return null;
  }
}

function snapshot(pid) {
  return {
    t: performance.now(),
    server: serverCpu(pid),
    self: process.cpuUsage(),
    machine: machineCpu(),
    load: os.loadavg(),
  };
}

/** CPU used between two snapshots, in cores (1 = one core busy the whole time). */
function cpuBetween(a, b) {
  const wall = (b.t - a.t) / 1000;
  const cores = (x, y) => (x === null || y === null ? null : round((y - x) / wall, 2));
  const others = Object.entries(b.server.threads)
    .filter(([k]) => k !== 'main')
    .map(([k, v]) => [k, cores(a.server.threads[k] ?? 0, v)])
    .sort((x, y) => y[1] - x[1]);
  return {
    wall_s: round(wall, 1),
    server_cores: cores(a.server.total, b.server.total),
    server_main_thread_cores: cores(a.server.main, b.server.main),
    // the share of the phase the main thread was ready to run but had no CPU (scheduler)
    server_main_thread_waiting_for_cpu: cores(a.server.mainWait, b.server.mainWait),
    // in the analyses phase the busiest other thread is the analysis worker (threads are all
    // called "node"; the others are V8's and libuv's helpers)
    server_busiest_other_thread_cores: others[0]?.[1] ?? null,
    server_other_threads: Object.fromEntries(others.filter(([, v]) => v >= 0.01)),
    load_generator_cores: round(
      (b.self.user + b.self.system - a.self.user - a.self.system) / 1e6 / wall,
      2,
    ),
    machine_busy_cores: a.machine && b.machine ? cores(a.machine.busy, b.machine.busy) : null,
    load_average_1min: round(b.load[0], 2),
  };
}

// ── 1: demo data and the fits the runs hold ──────────────────────────────────────────────────

async function prepareData() {
  const demo = path.join(workDir, 'demo');
  const out = path.join(workDir, 'results');
  mkdirSync(out, { recursive: true });
  log(`generating the demo data set and fitting it through the CLI (in ${workDir})`);
  await sightline(['demo', 'generate', '--out', demo, '--seed', '1', '--quiet']);
  const catalogueFile = path.join(demo, 'pulsars.json');
  const catalogue = JSON.parse(readFileSync(catalogueFile, 'utf8'));
  const names = catalogue.pulsars.map((p) => p.source);
  const files = [];
  await Promise.all(
    names.map(async (name) => {
      const fit = path.join(out, `${name}.fit.json`);
      const series = path.join(out, `${name}.series.json`);
      await sightline(
        ['dm', 'fit', path.join(demo, 'toas', `${name}.csv`), '--clip', '5'].concat([
          '--quiet',
          '--json',
          '--out',
          fit,
        ]),
        { written: fit },
      );
      await sightline(
        ['dm', 'series', fit, '--smooth', 'gp', '--solar', String(catalogue.solar_n0_cm3)].concat([
          '--positions',
          catalogueFile,
          '--quiet',
          '--json',
          '--out',
          series,
        ]),
        { written: series },
      );
      files.push(fit, series);
    }),
  );
  const scattered = ['SBP-D', 'SBP-F'];
  const profileSets = [];
  for (const name of scattered) {
    const folder = path.join(demo, 'profiles', name);
    const visits = readdirSync(folder)
      .filter((f) => f.endsWith('.npy'))
      .sort();
    const scatter = path.join(out, `${name}.scatter.json`);
    await sightline(
      ['scatter', 'fit', path.join(folder, visits[10]), '--quiet', '--json', '--out', scatter],
      { written: scatter },
    );
    files.push(scatter);
    for (const v of [10, 20, 30, 40].map((i) => visits[i]).filter(Boolean)) {
      const meta = JSON.parse(readFileSync(path.join(folder, `${v}.json`), 'utf8'));
      const rows = readNpy2d(path.join(folder, v));
      if (rows.length !== meta.freqs_mhz.length)
        throw new Error(`${v}: ${rows.length} profiles but ${meta.freqs_mhz.length} frequencies`);
      const set = {
        source: meta.source,
        mjd: meta.mjd,
        period_s: meta.period_s,
        ...(meta.dm !== undefined ? { dm: meta.dm } : {}),
        profiles: rows.map((bins, i) => ({ freq_mhz: meta.freqs_mhz[i], bins })),
      };
      const file = path.join(out, v.replace(/\.npy$/, '.profiles.json'));
      writeFileSync(file, JSON.stringify(set));
      profileSets.push(file);
    }
  }
  files.sort();
  const results = files.map((f) => ({
    file: path.basename(f),
    text: readFileSync(f, 'utf8'),
  }));
  for (const r of results) r.result = JSON.parse(r.text);
  log(
    `${results.length} results (${results.map((r) => Math.round(r.text.length / 1000)).join(', ')} kB), ${profileSets.length} profile sets`,
  );
  return { catalogueFile, results, profileSets };
}

// ── 2: a server per engine ───────────────────────────────────────────────────────────────────

async function freshPgDatabase(adminUrl) {
  const name = `sightline_load_${Math.random().toString(36).slice(2, 12)}`;
  const client = new pg.Client({ connectionString: adminUrl });
  await client.connect();
  await client.query(`CREATE DATABASE ${name}`);
  await client.end();
  const url = new URL(adminUrl);
  url.pathname = `/${name}`;
  return {
    name,
    url: url.toString(),
    async drop() {
      const c = new pg.Client({ connectionString: adminUrl });
      await c.connect();
      await c.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`);
      await c.end();
    },
  };
}

/** The environment the server and the seed step get: none of the caller's server settings. */
function serverEnv(databaseUrl, extra = {}) {
  const env = { ...process.env, ...extra };
  for (const k of [
    'DATABASE_URL',
    'SMTP_URL',
    'SIGHTLINE_PUBLIC_URL',
    'SIGHTLINE_TRUSTED_ORIGINS',
    'SIGHTLINE_AUTH_SECRET',
    'SIGHTLINE_ANALYSIS_THREADS',
    'SIGHTLINE_IN_PROCESS_WORKER',
    'SIGHTLINE_SIGN_IN_PER_MINUTE',
    'SIGHTLINE_WEB_DIR',
    'LOG_LEVEL',
    'PORT',
    'HOST',
  ])
    delete env[k];
  if (databaseUrl) env.DATABASE_URL = databaseUrl;
  return env;
}

async function startServer(engine, dir, databaseUrl) {
  const logFile = path.join(dir, 'server.log');
  const loopFile = path.join(dir, 'loop-delay.json');
  const fd = openSync(logFile, 'a');
  const profDir = opts['cpu-prof'] ? path.resolve(opts['cpu-prof'], engine) : undefined;
  if (profDir) mkdirSync(profDir, { recursive: true });
  const child = spawn(
    process.execPath,
    [
      '--import',
      pathToFileURL(LOOP_PRELOAD).href,
      ...(profDir ? ['--cpu-prof', `--cpu-prof-dir=${profDir}`] : []),
      SERVER,
      '--port',
      '0',
      '--host',
      '127.0.0.1',
      '--data-dir',
      path.join(dir, 'data'),
    ],
    {
      stdio: ['ignore', fd, fd],
      env: serverEnv(databaseUrl, { SIGHTLINE_LOAD_LOOP_FILE: loopFile }),
    },
  );
  closeSync(fd);
  let exited = null;
  const done = new Promise((resolve) =>
    child.on('exit', (code, signal) => {
      exited = code ?? signal;
      resolve();
    }),
  );
  const stop = async () => {
    if (exited !== null) return;
    child.kill('SIGTERM');
    const timer = setTimeout(() => child.kill('SIGKILL'), 30_000);
    await done;
    clearTimeout(timer);
  };
  cleanups.push(stop);
  const tail = () => readFileSync(logFile, 'utf8').split('\n').slice(-20).join('\n');
  for (let i = 0; i < 600; i++) {
    if (exited !== null) throw new Error(`the server exited (${exited}):\n${tail()}`);
    const m = /listening on (http:\/\/[^\s/]+)\//.exec(readFileSync(logFile, 'utf8'));
    if (m) {
      const url = m[1];
      await api(url, 'GET', '/api/health');
      return {
        url,
        pid: child.pid,
        logFile,
        stop,
        /** the event-loop delay since the previous call (SIGUSR2 to the preload) */
        async loopDelay() {
          rmSync(loopFile, { force: true });
          child.kill('SIGUSR2');
          // the handler runs when the main thread gets to it: allow for a stalled server
          for (let j = 0; j < 1200 && !existsSync(loopFile); j++) await sleep(50);
          return existsSync(loopFile) ? JSON.parse(readFileSync(loopFile, 'utf8')) : null;
        },
      };
    }
    await sleep(100);
  }
  throw new Error(`the server did not start within 60 s:\n${tail()}`);
}

async function signIn(url, email, password) {
  const r = await fetch(`${url}/api/auth/sign-in/email`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', origin: url },
    body: JSON.stringify({ email, password }),
  });
  if (r.status !== 200) throw new Error(`sign-in of ${email}: ${r.status} ${await r.text()}`);
  const set = r.headers.getSetCookie().find((c) => c.startsWith('sightline.session_token='));
  if (!set) throw new Error(`sign-in of ${email}: no session cookie`);
  return set.split(';')[0];
}

// ── 3: content ───────────────────────────────────────────────────────────────────────────────

async function seedRuns(url, tokens, results) {
  const made = [];
  for (const round of [0, 1, 2]) {
    const who = round === 1 ? BEN : ANA;
    for (const r of results) {
      const view = await api(url, 'POST', '/api/runs', {
        token: tokens[who],
        body: { result: r.result, title: `${r.file} (seed ${round + 1})`, submit: round !== 1 },
        expect: [201],
      });
      made.push(view);
    }
  }
  // the lead reviews two: a baseline for the reference pulsar, and a returned fit
  const fitOf = (pulsar) =>
    made.find((v) => v.kind === 'dm-fit' && v.pulsar === pulsar && v.state === 'in_review');
  const approve = fitOf('SBP-B');
  const ret = fitOf('SBP-E');
  if (approve)
    await api(url, 'POST', `/api/runs/${approve.id}/reviews`, {
      token: tokens[LEAD],
      body: { decision: 'approve', version: approve.version, comment: 'load test baseline' },
      expect: [201],
    });
  if (ret)
    await api(url, 'POST', `/api/runs/${ret.id}/reviews`, {
      token: tokens[LEAD],
      body: { decision: 'return', version: ret.version, comment: 'load test: please refit' },
      expect: [201],
    });
  return made.map((v) => v.id);
}

async function uploadProfiles(url, token, files) {
  const ids = [];
  for (const file of files) {
    const form = new FormData();
    form.append('file', new Blob([readFileSync(file)]), path.basename(file));
    const r = await fetch(`${url}/api/uploads`, {
      method: 'POST',
      headers: { authorization: `Bearer ${token}` },
      body: form,
    });
    const body = await r.json();
    if (r.status !== 201 || body.kind !== 'profiles')
      throw new Error(`upload of ${file}: ${r.status} ${JSON.stringify(body).slice(0, 300)}`);
    ids.push(body.id);
  }
  return ids;
}

// ── 4: load ──────────────────────────────────────────────────────────────────────────────────

/**
 * setupClient for `connections` connections of one request per second each: connection i sends
 * at offset + i/connections of every second. autocannon gives every connection its own 1 s
 * timer, all started together; each one is replaced by one started at the connection's slot.
 */
function pacedClients(connections, offsetMs) {
  let i = 0;
  return (client) => {
    const slot = offsetMs + (1000 * i++) / connections;
    // hold the request autocannon sends on connecting: the first one goes at the slot
    client.reqsMadeThisSecond = 1;
    setImmediate(() => {
      if (client.rateInterval === undefined || typeof client._doRequest !== 'function')
        throw new Error(
          'autocannon internals changed (no rateInterval/_doRequest on its client): the pacing in tests/load/run.mjs needs updating',
        );
      clearInterval(client.rateInterval);
      const tick = () => {
        if (client.destroyed) return;
        client.reqsMadeThisSecond = 0;
        if (client.paused) {
          client.paused = false;
          client._doRequest();
        }
      };
      client.rateInterval = setTimeout(() => {
        if (client.destroyed) return;
        tick();
        client.rateInterval = setInterval(tick, 1000);
      }, slot);
    });
  };
}

function cannon(name, url, rate, offsetMs, duration, request) {
  const times = [];
  return new Promise((resolve, reject) => {
    const tracker = autocannon(
      {
        url,
        title: name,
        connections: rate,
        overallRate: rate,
        duration,
        timeout: 10,
        ignoreCoordinatedOmission: true,
        setupClient: pacedClients(rate, offsetMs),
        requests: [request],
      },
      (err, result) => {
        trackers.delete(tracker);
        if (err) reject(err);
        else resolve({ result, times });
      },
    );
    trackers.add(tracker);
    tracker.on('response', (_client, _status, _bytes, ms) => times.push(ms));
  });
}

function streamStats(name, target, runs) {
  const times = runs.flatMap((r) => r.times).sort((a, b) => a - b);
  const sum = (f) => runs.reduce((a, r) => a + f(r.result), 0);
  const duration = Math.max(...runs.map((r) => r.result.duration));
  const status = {};
  for (const r of runs)
    for (const [code, { count }] of Object.entries(r.result.statusCodeStats))
      status[code] = (status[code] ?? 0) + count;
  const responses = times.length;
  return {
    stream: name,
    target_rps: target,
    requests: responses,
    rps: round(responses / duration, 1),
    p50_ms: round(percentile(times, 50), 1),
    p99_ms: round(percentile(times, 99), 1),
    max_ms: round(times.at(-1) ?? null, 1),
    errors: sum((x) => x.errors),
    timeouts: sum((x) => x.timeouts),
    non2xx: sum((x) => x.non2xx),
    status,
    // autocannon's own figures (whole milliseconds), for comparison
    autocannon:
      runs.length === 1
        ? {
            p50_ms: runs[0].result.latency.p50,
            p99_ms: runs[0].result.latency.p99,
            max_ms: runs[0].result.latency.max,
          }
        : undefined,
  };
}

async function runLoad(url, duration, ctx) {
  let pushes = 0;
  const listPaths = [
    ...[1, 2, 3, 4, 5].map((p) => `/api/runs?page=${p}&page_size=50`),
    '/api/runs?page_size=25',
    '/api/runs?kind=dm-fit&page_size=50',
    '/api/runs?state=in_review&page_size=50',
    '/api/runs?pulsar=SBP-B&page_size=50',
    '/api/runs?kind=scatter-fit&state=draft&page_size=50',
  ];
  let li = 0;
  let pi = 0;
  const readHeaders = { cookie: ctx.cookie };
  const [list, page, push] = await Promise.all([
    cannon('run list', url, RATES.list, 0, duration, {
      method: 'GET',
      headers: readHeaders,
      setupRequest: (req) => ({ ...req, path: listPaths[li++ % listPaths.length] }),
    }),
    cannon('run page', url, RATES.page, 5, duration, {
      method: 'GET',
      headers: readHeaders,
      setupRequest: (req) => ({
        ...req,
        path: `/api/runs/${ctx.runIds[pi++ % ctx.runIds.length]}`,
      }),
    }),
    cannon('push', url, RATES.push, 2, duration, {
      method: 'POST',
      path: '/api/runs',
      headers: { authorization: `Bearer ${ctx.tokens[ANA]}`, 'content-type': 'application/json' },
      setupRequest: (req) => {
        const n = pushes++;
        const r = ctx.results[n % ctx.results.length];
        return { ...req, body: `{"title":"load push ${n + 1}","result":${r.text}}` };
      },
    }),
  ]);
  return {
    streams: [
      streamStats('run list', RATES.list, [list]),
      streamStats('run page', RATES.page, [page]),
      streamStats('all reads', RATES.list + RATES.page, [list, page]),
      streamStats('push', RATES.push, [push]),
    ],
  };
}

/**
 * After a load run the server may still work through requests whose clients have gone (a
 * backlog, when it could not keep up): wait until a health check (one database round trip)
 * answers within 100 ms, so the next run starts from a quiet server. Seconds waited.
 */
async function drain(url) {
  const t0 = performance.now();
  for (;;) {
    const t = performance.now();
    await api(url, 'GET', '/api/health');
    if (performance.now() - t < 100) return round((performance.now() - t0) / 1000, 1);
    if (performance.now() - t0 > 300_000) throw new Error('the server did not settle within 5 min');
    await sleep(200);
  }
}

/**
 * What one request of each kind costs with nothing else running: SERIAL_N requests one after
 * another; the latency, and the server's CPU time (all threads, and the main thread) per request.
 */
async function serialCost(url, pid, ctx) {
  const kinds = [
    { kind: 'run list', path: (i) => `/api/runs?page=${1 + (i % 5)}&page_size=50`, cookie: true },
    {
      kind: 'run page',
      path: (i) => `/api/runs/${ctx.runIds[i % ctx.runIds.length]}`,
      cookie: true,
    },
    { kind: 'push', path: () => '/api/runs', push: true },
  ];
  const out = [];
  for (const k of kinds) {
    const times = [];
    const a = serverCpu(pid);
    for (let i = 0; i < SERIAL_N; i++) {
      const r = ctx.results[i % ctx.results.length];
      const t = performance.now();
      const res = await fetch(url + k.path(i), {
        method: k.push ? 'POST' : 'GET',
        headers: k.push
          ? { authorization: `Bearer ${ctx.tokens[ANA]}`, 'content-type': 'application/json' }
          : { cookie: ctx.cookie },
        body: k.push ? `{"title":"serial push ${i + 1}","result":${r.text}}` : undefined,
      });
      await res.arrayBuffer();
      times.push(performance.now() - t);
      if (res.status !== (k.push ? 201 : 200))
        throw new Error(`${k.kind}: ${res.status} from ${k.path(i)}`);
    }
    const b = serverCpu(pid);
    times.sort((x, y) => x - y);
    const per = (x, y) => (x === null || y === null ? null : round(((y - x) * 1000) / SERIAL_N, 1));
    out.push({
      kind: k.kind,
      requests: SERIAL_N,
      median_ms: round(percentile(times, 50), 1),
      p90_ms: round(percentile(times, 90), 1),
      server_cpu_ms_per_request: per(a.total, b.total),
      main_thread_cpu_ms_per_request: per(a.main, b.main),
    });
  }
  return out;
}

// ── 5: scattering analyses kept running ──────────────────────────────────────────────────────

function startAnalyses(url, token, uploadIds, inFlight) {
  let stopping = false;
  let k = 0;
  const pending = new Map(); // id → model
  const jobs = [];
  const problems = [];
  let polls = 0;
  let firstDone;
  const first = new Promise((resolve) => (firstDone = resolve));
  const record = (view, model) => {
    pending.delete(view.id);
    jobs.push({
      id: view.id,
      model,
      state: view.state,
      error: view.error,
      queued: Date.parse(view.created_at),
      started: Date.parse(view.started_at),
      finished: Date.parse(view.finished_at),
    });
    if (view.state === 'done') firstDone();
    else problems.push(`job ${view.id} (${model}) failed: ${JSON.stringify(view.error)}`);
  };
  async function loop() {
    const until = () => (stopping ? pending.size === 0 : false) || aborting;
    const give = Date.now() + 180_000;
    while (!until()) {
      try {
        while (!stopping && pending.size < inFlight) {
          const model = SCATTER_MODELS[k % SCATTER_MODELS.length];
          const view = await api(url, 'POST', '/api/analyses', {
            token,
            body: {
              kind: 'scatter-fit',
              upload_id: uploadIds[k++ % uploadIds.length],
              params: { model },
            },
            expect: [202],
          });
          pending.set(view.id, model);
        }
        await sleep(POLL_MS);
        polls++;
        // one request for every job in flight: the 200 newest jobs
        const { items } = await api(url, 'GET', '/api/analyses', { token });
        const byId = new Map(items.map((j) => [j.id, j]));
        for (const [id, model] of [...pending]) {
          const view = byId.get(id) ?? (await api(url, 'GET', `/api/analyses/${id}`, { token }));
          if (view.state === 'done' || view.state === 'failed') record(view, model);
        }
      } catch (e) {
        problems.push(e.message);
        await sleep(1000);
      }
      if (stopping && Date.now() > give) {
        problems.push(`${pending.size} job(s) still unfinished 180 s after the phase`);
        break;
      }
    }
  }
  const running = loop();
  return {
    jobs,
    problems,
    polls: () => polls,
    first,
    /** stop queuing; wait for the jobs in flight */
    async stop() {
      stopping = true;
      await running;
    },
  };
}

function jobStats(driver, fromMs, toMs) {
  const inPhase = driver.jobs.filter((j) => j.finished >= fromMs && j.finished <= toMs);
  const done = inPhase.filter((j) => j.state === 'done');
  const took = done.map((j) => j.finished - j.started).sort((a, b) => a - b);
  return {
    finished_in_phase: inPhase.length,
    done: done.length,
    failed: inPhase.length - done.length,
    per_minute: round((done.length * 60_000) / (toMs - fromMs), 1),
    // queued → finished, including the wait behind the other jobs in flight
    median_queued_to_finished_ms: percentile(took, 50),
    problems: driver.problems.slice(0, 5),
    problem_count: driver.problems.length,
  };
}

// ── per engine ───────────────────────────────────────────────────────────────────────────────

async function runEngine(engine, data) {
  const dir = path.join(workDir, engine);
  mkdirSync(dir, { recursive: true });
  let db;
  if (engine === 'postgres') {
    db = await freshPgDatabase(PG_ADMIN_URL);
    cleanups.push(() => db.drop());
    log(`[${engine}] fresh database ${db.name}`);
  }
  log(`[${engine}] seeding accounts, pulsars and tokens (sightline demo seed)`);
  await sightline(
    ['demo', 'seed', '--data-dir', path.join(dir, 'data'), '--catalogue', data.catalogueFile],
    { env: serverEnv(db?.url) },
  );
  const signIns = JSON.parse(readFileSync(path.join(dir, 'data', DEMO_PASSWORD_FILE), 'utf8'));
  const server = await startServer(engine, dir, db?.url);
  const { url } = server;
  log(`[${engine}] server at ${url} (pid ${server.pid})`);
  const tokens = signIns.tokens;
  for (const who of [ANA, BEN, LEAD])
    if (!tokens[who]) throw new Error(`no robot token for ${who} in ${DEMO_PASSWORD_FILE}`);
  const cookie = await signIn(url, GUEST, signIns.password);
  const me = await api(url, 'GET', '/api/me', { cookie });
  const role = me.role ?? me.user?.role;
  if (role !== 'viewer') throw new Error(`${GUEST} should be a viewer, /api/me says ${role}`);
  const runIds = await seedRuns(url, tokens, data.results);
  const uploadIds = await uploadProfiles(url, tokens[ANA], data.profileSets);
  log(`[${engine}] ${runIds.length} runs seeded, ${uploadIds.length} profile sets uploaded`);
  const ctx = { cookie, tokens, runIds, results: data.results };

  if (WARMUP > 0) {
    log(`[${engine}] warm-up, ${WARMUP} s (not counted)`);
    await runLoad(url, WARMUP, ctx);
    const drained = await drain(url);
    log(`  the server answered promptly again ${drained} s after the warm-up`);
  }
  log(`[${engine}] cost per request: ${SERIAL_N} of each kind, one at a time`);
  const serial = await serialCost(url, server.pid, ctx);
  for (const c of serial)
    log(
      `  ${c.kind.padEnd(9)} median ${c.median_ms} ms, p90 ${c.p90_ms} ms; server CPU ${c.server_cpu_ms_per_request} ms/request (main thread ${c.main_thread_cpu_ms_per_request})`,
    );
  const phases = [];
  const measure = async (name, extra) => {
    log(`[${engine}] phase "${name}": ${DURATION} s`);
    await server.loopDelay(); // start counting afresh
    const t0 = Date.now();
    const a = snapshot(server.pid);
    const load = await runLoad(url, DURATION, ctx);
    const b = snapshot(server.pid);
    const t1 = Date.now();
    const loop = await server.loopDelay();
    const phase = { phase: name, ...load, cpu: cpuBetween(a, b), event_loop_delay: loop };
    if (extra) phase.analyses = extra(t0, t1);
    phase.drain_s = await drain(url);
    phases.push(phase);
    for (const s of load.streams)
      log(
        `  ${s.stream.padEnd(9)} ${s.requests} req, ${s.rps}/s, p50 ${s.p50_ms} ms, p99 ${s.p99_ms} ms, max ${s.max_ms} ms, errors ${s.errors}, non-2xx ${s.non2xx}`,
      );
    log(
      `  server CPU ${phase.cpu.server_cores} cores (main thread ${phase.cpu.server_main_thread_cores}, waiting for a CPU ${phase.cpu.server_main_thread_waiting_for_cpu}, busiest other thread ${phase.cpu.server_busiest_other_thread_cores}), machine busy ${phase.cpu.machine_busy_cores}, event-loop delay p99 ${loop?.p99_ms} ms, max ${loop?.max_ms} ms`,
    );
  };

  await measure('idle');

  const threads = Math.max(1, os.availableParallelism() - 1); // the server's default pool size
  // enough that the job queue never runs dry, even when each HTTP call waits for seconds
  const inFlight = 4 * threads + 4;
  log(`[${engine}] starting scatter-fit analyses (${inFlight} in flight; pool ${threads} thread)`);
  const driver = startAnalyses(url, tokens[ANA], uploadIds, inFlight);
  const firstTimeout = sleep(120_000, 'timeout', { ref: false });
  if ((await Promise.race([driver.first, firstTimeout])) === 'timeout')
    throw new Error(`no analysis finished within 120 s: ${driver.problems.join('; ')}`);
  await measure('analyses', (t0, t1) => ({
    in_flight: inFlight,
    pool_threads: threads,
    ...jobStats(driver, t0, t1),
  }));
  const pollsBefore = driver.polls();
  await driver.stop();
  phases.at(-1).analyses.polls_total = pollsBefore;
  const a = phases.at(-1).analyses;
  log(`  analyses: ${a.done} done, ${a.failed} failed in the phase (${a.per_minute}/min)`);

  // warnings and errors the server logged (pino: 40 warn, 50 error)
  const levels = { warn: 0, error: 0, samples: [] };
  for (const line of readFileSync(server.logFile, 'utf8').split('\n')) {
    if (!line.startsWith('{')) continue;
    try {
      const entry = JSON.parse(line);
      if (entry.level >= 50) levels.error++;
      else if (entry.level >= 40) levels.warn++;
      if (entry.level >= 40 && levels.samples.length < 5)
        levels.samples.push(
          `${entry.msg ?? ''} ${entry.req?.method ?? ''} ${entry.req?.url ?? ''} ${entry.res?.statusCode ?? ''}`.trim(),
        );
    } catch {
      // not a log record
    }
  }
  const total = await api(url, 'GET', '/api/runs?page_size=1', { cookie });
  log(`[${engine}] stopping the server (${total.total} runs in the database)`);
  await server.stop();
  return {
    engine,
    database: engine === 'postgres' ? 'PostgreSQL (fresh database)' : 'PGlite (embedded)',
    postgres_version: engine === 'postgres' ? await pgVersion(PG_ADMIN_URL) : undefined,
    runs_at_end: total.total,
    cost_per_request: serial,
    server_log: levels,
    phases,
  };
}

async function pgVersion(url) {
  const c = new pg.Client({ connectionString: url });
  await c.connect();
  const r = await c.query('SHOW server_version');
  await c.end();
  return r.rows[0].server_version;
}

// ── report ───────────────────────────────────────────────────────────────────────────────────

function machine() {
  const cpus = os.cpus();
  return {
    node: process.version,
    nproc: os.availableParallelism(),
    cpu_model: cpus[0]?.model ?? 'unknown',
    memory_gb: round(os.totalmem() / 2 ** 30, 1),
    os: `${os.type()} ${os.release()} ${os.arch()}`,
    load_average_at_start: os.loadavg().map((x) => round(x, 2)),
    autocannon: JSON.parse(
      readFileSync(path.join(ROOT, 'node_modules/autocannon/package.json'), 'utf8'),
    ).version,
  };
}

function table(engines) {
  const head = [
    'engine',
    'phase',
    'stream',
    'requests',
    'req/s (target)',
    'p50 ms',
    'p99 ms',
    'max ms',
    'errors / non-2xx',
  ];
  const rows = [];
  for (const e of engines)
    for (const p of e.phases)
      for (const s of p.streams)
        rows.push([
          e.engine,
          p.phase,
          s.stream,
          String(s.requests),
          `${s.rps} (${s.target_rps})`,
          String(s.p50_ms),
          String(s.p99_ms),
          String(s.max_ms),
          `${s.errors} / ${s.non2xx}`,
        ]);
  const width = head.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i].length)));
  const line = (cells) => `| ${cells.map((c, i) => c.padEnd(width[i])).join(' | ')} |`;
  return [line(head), `|${width.map((w) => '-'.repeat(w + 2)).join('|')}|`, ...rows.map(line)].join(
    '\n',
  );
}

function targets(engines) {
  const checks = [];
  for (const e of engines)
    for (const p of e.phases) {
      const bad = p.streams.filter((s) => s.errors || s.non2xx || s.timeouts);
      checks.push({
        engine: e.engine,
        phase: p.phase,
        check: 'no errors or non-2xx',
        met: bad.length === 0,
        detail: bad
          .map((s) => `${s.stream}: ${s.errors} errors, ${JSON.stringify(s.status)}`)
          .join('; '),
      });
      for (const s of p.streams.filter((x) => x.stream !== 'push'))
        checks.push({
          engine: e.engine,
          phase: p.phase,
          check: `${s.stream} p99 < ${READ_P99_TARGET_MS} ms`,
          met: s.p99_ms !== null && s.p99_ms < READ_P99_TARGET_MS,
          detail: `p99 ${s.p99_ms} ms`,
        });
      for (const s of p.streams)
        if (s.rps < 0.95 * s.target_rps)
          checks.push({
            engine: e.engine,
            phase: p.phase,
            check: `${s.stream} rate reached`,
            met: false,
            detail: `${s.rps} of ${s.target_rps} req/s`,
          });
    }
  return checks;
}

// ── main ─────────────────────────────────────────────────────────────────────────────────────

const started = new Date();
const machineInfo = machine();
log(
  `engines: ${ENGINES.join(', ')}; ${DURATION} s per phase; ${machineInfo.nproc} CPUs (${machineInfo.cpu_model}), load ${machineInfo.load_average_at_start.join(' ')}`,
);
const data = await prepareData();
const engines = [];
for (const engine of ENGINES) engines.push(await runEngine(engine, data));
if (!ENGINES.includes('postgres'))
  log('PostgreSQL skipped: give --pg URL or SIGHTLINE_TEST_DATABASE_URL to include it');

const checks = targets(engines);
const report = {
  date: started.toISOString(),
  // the PostgreSQL URL holds a password: never written out
  command: `node tests/load/run.mjs ${process.argv
    .slice(2)
    .map((a, i, all) => (all[i - 1] === '--pg' ? 'URL' : a.startsWith('--pg=') ? '--pg=URL' : a))
    .join(' ')}`.trim(),
  machine: machineInfo,
  settings: {
    duration_s: DURATION,
    warmup_s: WARMUP,
    rate_scale: SCALE,
    rates_rps: RATES,
    read_p99_target_ms: READ_P99_TARGET_MS,
    analysis_poll_ms: POLL_MS,
    scatter_models: SCATTER_MODELS,
    seeded_runs: 3 * data.results.length,
    profile_sets: data.profileSets.length,
  },
  engines,
  targets: checks,
};
writeFileSync(RESULTS, JSON.stringify(report, null, 2) + '\n');

process.stdout.write(`\n${table(engines)}\n\n`);
process.stdout.write(
  `cost per request, one at a time (${SERIAL_N} each; server CPU from /proc):\n` +
    engines
      .flatMap((e) =>
        e.cost_per_request.map(
          (c) =>
            `  ${e.engine.padEnd(8)} ${c.kind.padEnd(9)} median ${c.median_ms} ms, p90 ${c.p90_ms} ms; server CPU ${c.server_cpu_ms_per_request} ms (main thread ${c.main_thread_cpu_ms_per_request} ms)`,
        ),
      )
      .join('\n') +
    '\n\n',
);
for (const e of engines)
  for (const p of e.phases) {
    const c = p.cpu;
    const l = p.event_loop_delay;
    process.stdout.write(
      `${e.engine} / ${p.phase}: server ${c.server_cores} cores (main thread ${c.server_main_thread_cores}, waiting for a CPU ${c.server_main_thread_waiting_for_cpu}, busiest other thread ${c.server_busiest_other_thread_cores}), load generator ${c.load_generator_cores}, machine busy ${c.machine_busy_cores} of ${machineInfo.nproc}; event-loop delay p50 ${l?.p50_ms} ms, p99 ${l?.p99_ms} ms, max ${l?.max_ms} ms` +
        (p.analyses
          ? `; scatter-fit jobs: ${p.analyses.done} done, ${p.analyses.failed} failed (${p.analyses.per_minute}/min)`
          : '') +
        '\n',
    );
  }
process.stdout.write('\ntargets:\n');
for (const c of checks)
  process.stdout.write(
    `  ${c.met ? 'met    ' : 'NOT MET'}  ${c.engine} / ${c.phase}: ${c.check}${c.detail ? ` (${c.detail})` : ''}\n`,
  );
process.stdout.write(`\nresults written to ${path.relative(process.cwd(), RESULTS) || RESULTS}\n`);
await cleanUp();
process.exit(0);
