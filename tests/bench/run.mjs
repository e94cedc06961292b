// `npm run bench`: Sightline side by side with NumPy and SciPy, in one run, reported as ratios.
//
//   node tests/bench/run.mjs [--repeat N] [--visits N] [--cold N] [--batch-jobs N]
//                            [--scatter-visits N] [--cube-trials N] [--rss time|getrusage]
//                            [--keep]
//
// (`npm run bench` builds the CLI first; the run copies dist/cli and the launcher into its
// temporary folder and runs that copy, so a rebuild during the run changes nothing measured.)
// Every case runs both sides as fresh processes on the same generated inputs, alternating
// Sightline and reference, --repeat times (default 3); the table shows each side's median.
// Peak memory is each process's peak resident set, measured from outside with
// `/usr/bin/time -f %M` (GNU time's maximum RSS, KiB); where that program is missing (or with
// --rss getrusage) each child reports getrusage's ru_maxrss at exit instead
// (tests/bench/maxrss-preload.mjs for node, tests/bench/maxrss.py for python). The table shows
// the largest peak over the repetitions, and says which method measured it. Steps:
//
//   1. DM fits: a seeded synthetic residual table (default --visits 10⁵ visits × 10 arrival
//      times = 10⁶ rows) in a temporary folder, then per repetition:
//        fit only    tests/bench/fit-only.ts (bundled like the CLI, run by plain node): load the
//                    table (not timed), time fitDmVisits() once; against the fit stage inside
//                    `python3 dm_fit_numpy.py FILE --out OUT` (sort, group, normal equations;
//                    timed inside that same process, which is also the end-to-end run below);
//        end to end  `sightline dm fit FILE --json --out OUT --quiet` against
//                    `python3 dm_fit_numpy.py FILE --out OUT`, wall clock of each whole
//                    process: start, read, validate, fit, write;
//      then every visit's DM (and its error, χ², dof) must agree (DM to 1e-6 relative);
//   2. cold start: `sightline delay --dm 100 --freq 1400` against `node -e ''`, --cold runs each
//      (default 15), one unrecorded warm-up each first (file cache);
//   3. batch: --batch-jobs (default 10⁵) small residual tables, one visit of 10 arrival times in
//      2–4 bands each, seeded, one file per job; `sightline batch MANIFEST --out DIR --quiet`
//      (one dm-fit job per file by a glob, the default worker pool of one thread per CPU; each
//      job reads, validates, fits, checks and writes its result atomically with its resume
//      sidecar, one JSON line on stdout) against tests/bench/dm_batch_numpy.py: ONE python
//      process looping over the same files, calling dm_fit_numpy.load/fit (imported) and writing
//      one JSON per job. An in-process loop because 10⁵ interpreter starts (and `import numpy`
//      each time) would take hours and measure Python's start-up, not the fit; a Python user
//      writes that loop. Wall clock of each whole process; fresh output folders each repetition
//      (removed before, not timed). A sample of up to 1000 jobs, evenly spread, must agree like
//      the DM fits (DM to 1e-6 relative, the same check);
//   4. scattering: --scatter-visits (default 100) visits × 64 bands × 1024 bins of scattered
//      single-Gaussian profiles, written once as a float64 .npy plus the true τ and noise
//      (tests/bench/scatter-data.ts, through shared/sim/profiles.ts); per repetition every
//      profile fitted with fitProfileBand(bins, { model: 'gauss', noise })
//      (tests/bench/scatter-fit-only.ts, bundled like the CLI) and with scipy.optimize.curve_fit
//      (tests/bench/scatter_fit_scipy.py: default 'lm' with forward differences, and with an
//      analytic Jacobian, for information); one pass each, loading not timed; τ compared where
//      both sides call it constrained (reported, not enforced);
//   5. cube DM refinement: one seeded cube of 1024 channels × 2048 bins (1100–1900 MHz, float64
//      .npy, dedispersed at a DM 0.0042 pc cm⁻³ below the true one), its noiseless template and
//      --cube-trials (default 512) trial DMs over the applied DM ± 0.02 (tests/bench/cube-data.ts,
//      through shared/sim/cubes.ts). Sightline (tests/bench/refine-only.ts, bundled like the CLI)
//      reads them (not timed) and times, one pass each: harmonicsOf over all channels on its own;
//      prepareTemplate + analyseCube; matchedWeights, weightedCentreMhz, shiftPerDm and the
//      DmShifter constructor; and, the measurement, shifter.snrAt(dm − dmApplied) for every
//      trial in order. NumPy (tests/bench/dm_refine_numpy.py) takes Sightline's per-channel
//      weights, noise and shifts as given and times np.fft.rfft of the cube and template, the
//      weighted cross-spectra and, the measurement, the same Fourier shifts and sums per trial,
//      written two ways: --form cexp (np.exp of the complex phase array) and --form trig
//      (np.cos/np.sin into preallocated buffers, np.einsum sums: the tuned loop). Both S/N curves
//      must agree with Sightline's to 1e-6 relative at every trial;
//   6. dynamic-spectrum ACF: one seeded dynamic spectrum of 1024 channels × 4096
//      sub-integrations (float64 .npy, ≈ 5 % of the pixels flagged as NaN; tests/bench/acf-data.ts,
//      through shared/sim/scint.ts). Sightline (tests/bench/acf-only.ts, bundled like the CLI)
//      reads it (not timed) and times maskedAcf(ds, ds.inputMask) whole, one pass; NumPy
//      (tests/bench/acf_numpy.py) the same computation with np.fft.rfft2/irfft2, one pass. Every
//      finite ACF value must agree to 1e-9 of the zero-lag value, NaN exactly where NaN;
//   7. prints one table — case, Sightline median, reference median, ratio (Sightline / reference;
//      below 1 means Sightline is faster), target, met?, peak RSS of each side — then what each
//      number is, the stage timings and the agreement, and writes tests/bench/results.json
//      (machine, data sizes, the cases as in the table, every run). The temporary folder is
//      removed (unless --keep).
//
// Benchmarks are never test assertions: this script only exits non-zero when a step fails, the
// DM results disagree (large table or batch sample), the cube S/N curves disagree or the ACFs
// disagree (the scattering agreement is reported, not enforced). A target not met is reported
// as such, never an error.
import { spawnSync } from 'node:child_process';
import {
  closeSync,
  copyFileSync,
  cpSync,
  existsSync,
  mkdirSync,
  mkdtempSync,
  openSync,
  readdirSync,
  readFileSync,
  rmSync,
  statSync,
  symlinkSync,
  writeFileSync,
  writeSync,
} from 'node:fs';
import { availableParallelism, cpus, tmpdir, totalmem } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const ROOT = fileURLToPath(new URL('../../', import.meta.url));
const BENCH = join(ROOT, 'tests/bench');
const PYTHON = '/usr/bin/python3';
const GNU_TIME = '/usr/bin/time';
const K_CONVENTIONAL = 1 / 2.41e-4; // s MHz² pc⁻¹ cm³, Sightline's default constant
const SEED = 20240611;
/** DM agreement, Sightline against NumPy, relative (the brief's bar; it is not loosened) */
const DM_REL_TOL = 1e-6;

// ---------------------------------------------------------------------------------------------
// options

const argv = process.argv.slice(2);
const KNOWN = new Set([
  '--repeat',
  '--visits',
  '--cold',
  '--batch-jobs',
  '--scatter-visits',
  '--cube-trials',
  '--rss',
  '--keep',
]);
for (let i = 0; i < argv.length; i++) {
  if (!KNOWN.has(argv[i])) fail(`unknown option ${argv[i]}`);
  if (argv[i] !== '--keep') i++;
}
const opt = (name, fallback) => {
  const i = argv.indexOf(name);
  if (i < 0) return fallback;
  const v = Number(argv[i + 1]);
  if (!Number.isInteger(v) || v < 1) fail(`${name} needs a positive integer`);
  return v;
};
const REPEAT = opt('--repeat', 3); // process pairs per case (median reported)
const N_VISITS = opt('--visits', 100_000); // 10 arrival times per visit
const COLD_RUNS = opt('--cold', 15); // cold-start runs per side (median reported)
const BATCH_JOBS = opt('--batch-jobs', 100_000); // small DM-fit jobs, one file each
const SCATTER_VISITS = opt('--scatter-visits', 100); // 64 profiles of 1024 bins per visit
const CUBE_TRIALS = opt('--cube-trials', 512); // trial DMs over the 1024 × 2048 cube
if (CUBE_TRIALS < 2) fail('--cube-trials needs at least 2');
const KEEP = argv.includes('--keep');
const RSS_ASKED = (() => {
  const i = argv.indexOf('--rss');
  if (i < 0) return 'auto';
  const v = argv[i + 1];
  if (v !== 'time' && v !== 'getrusage') fail('--rss needs time or getrusage');
  return v;
})();

function fail(message) {
  process.stderr.write(`bench: ${message}\n`);
  process.exit(1);
}

// ---------------------------------------------------------------------------------------------
// helpers

const now = () => process.hrtime.bigint();
const secondsSince = (t0) => Number(process.hrtime.bigint() - t0) / 1e9;
const median = (xs) => {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
};
const log = (text) => process.stderr.write(`· ${text}\n`);

/** GNU time answers `-f %M` with the peak RSS in KiB: usable only if it runs here. */
const gnuTimeWorks = () =>
  existsSync(GNU_TIME) &&
  spawnSync(GNU_TIME, ['-f', '%M', 'true'], { encoding: 'utf8' }).status === 0;
const RSS_METHOD =
  RSS_ASKED === 'getrusage'
    ? 'getrusage'
    : gnuTimeWorks()
      ? 'time'
      : RSS_ASKED === 'time'
        ? null
        : 'getrusage';
if (RSS_METHOD === null) fail(`--rss time: ${GNU_TIME} is missing or does not run`);
const RSS_DESCRIPTION =
  RSS_METHOD === 'time'
    ? `peak RSS of each process by \`${GNU_TIME} -f %M\` (GNU time, from outside the process)`
    : 'peak RSS of each process from getrusage ru_maxrss, reported by the child at exit (node: process.resourceUsage().maxRSS via tests/bench/maxrss-preload.mjs; python: resource.getrusage via tests/bench/maxrss.py)';
let rssDir; // set once the temporary folder exists
let rssCount = 0;

/**
 * Run a command to completion: its stdout (or, with stdoutFile, stdout goes to that file), its
 * wall-clock seconds and its peak RSS in KiB (null when the method cannot see it). Fails loudly.
 */
function run(cmd, args, what, { stdoutFile } = {}) {
  const rssFile = join(rssDir, `rss-${++rssCount}.txt`);
  let command = cmd;
  let commandArgs = args;
  const env = { ...process.env };
  if (RSS_METHOD === 'time') {
    command = GNU_TIME;
    commandArgs = ['-f', '%M', '-o', rssFile, cmd, ...args];
  } else if (cmd === process.execPath) {
    commandArgs = ['--import', pathToFileURL(join(BENCH, 'maxrss-preload.mjs')).href, ...args];
    env.SIGHTLINE_BENCH_RSS_FILE = rssFile;
  } else if (cmd === PYTHON) {
    commandArgs = [join(BENCH, 'maxrss.py'), ...args];
    env.SIGHTLINE_BENCH_RSS_FILE = rssFile;
  }
  const out = stdoutFile ? openSync(stdoutFile, 'w') : 'pipe';
  const t0 = now();
  const r = spawnSync(command, commandArgs, {
    cwd: ROOT,
    env,
    encoding: 'utf8',
    maxBuffer: 64 * 1024 * 1024,
    stdio: ['ignore', out, 'pipe'],
  });
  const wallS = secondsSince(t0);
  if (stdoutFile) closeSync(out);
  if (r.error) fail(`${what}: ${r.error.message}`);
  if (r.status !== 0) fail(`${what} exited with ${r.status}:\n${r.stderr}`);
  let rssKiB = null;
  if (existsSync(rssFile)) {
    // GNU time writes "Command exited with non-zero status …" first when it does: last line
    const last = readFileSync(rssFile, 'utf8').trim().split('\n').at(-1);
    rssKiB = Number.isFinite(Number(last)) ? Number(last) : null;
    rmSync(rssFile, { force: true });
  }
  return { stdout: r.stdout ?? '', stderr: r.stderr, wallS, rssKiB };
}

/** The largest of the peaks seen, MiB (null when none was measured). */
const peakMiB = (runs) => {
  const seen = runs.map((r) => r.rssKiB).filter((v) => v !== null);
  return seen.length ? Math.max(...seen) / 1024 : null;
};

/**
 * sfc32 (a small fast counting generator), seeded through splitmix32; Gaussian deviates by
 * Box–Muller. Written here so the data set depends on nothing but this file and the seed.
 */
function seededRandom(seed) {
  let s = seed >>> 0;
  const splitmix = () => {
    s = (s + 0x9e3779b9) >>> 0;
    let z = s;
    z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
    z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
    return (z ^ (z >>> 16)) >>> 0;
  };
  let a = splitmix();
  let b = splitmix();
  let c = splitmix();
  let d = splitmix();
  const next = () => {
    const t = (((a + b) >>> 0) + d) >>> 0;
    d = (d + 1) >>> 0;
    a = b ^ (b >>> 9);
    b = (c + (c << 3)) >>> 0;
    c = ((c << 21) | (c >>> 11)) >>> 0;
    c = (c + t) >>> 0;
    return t;
  };
  for (let i = 0; i < 12; i++) next();
  const uniform = () => (next() + 0.5) / 4294967296; // in (0, 1)
  const normal = () => Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform());
  return { uniform, normal };
}

// ---------------------------------------------------------------------------------------------
// data: the large DM table (1.)

/**
 * The synthetic table, in time order (pulsars interleaved, as observations arrive), so both
 * sides must sort by source and time. Five pulsars BENCH-1..BENCH-5, each visited every 14 days
 * (pulsar p on day offset 0, 3, 6, 8, 11 of each fortnight, so visits of one pulsar are ≥ 14 days
 * and consecutive file rows of different pulsars ≥ 2 days apart); 10 arrival times per visit
 * within 0.1 day, so the default `--gap 0.5` yields exactly 10 rows per visit. Per visit: an
 * offset (±10 µs) and a ΔDM with 0.001 ≤ |ΔDM| ≤ 0.02 pc cm⁻³ (kept away from zero so relative
 * DM differences are meaningful); per row: ν uniform in 550–3400 MHz, σ uniform in 0.1–2 µs and
 *   residual_us = offset + K·ΔDM·1e6/ν² + σ·N(0,1),   K = 1/2.41e-4.
 * mjd is decimal text with 15 decimals built digit by digit (never printed from a double).
 */
function writeTable(path, nVisits) {
  const rng = seededRandom(SEED);
  const dayOffset = [0, 3, 6, 8, 11];
  const fd = openSync(path, 'w');
  let chunk = 'source,mjd,freq_mhz,err_us,residual_us\n';
  let rows = 0;
  for (let v = 0; v < nVisits; v++) {
    const p = v % 5;
    const day = 45000 + 14 * Math.floor(v / 5) + dayOffset[p];
    const start = 0.1 + 0.7 * rng.uniform(); // fraction of the day when the visit starts
    const offsetUs = 20 * (rng.uniform() - 0.5);
    const dm = (0.001 + 0.019 * rng.uniform()) * (rng.uniform() < 0.5 ? -1 : 1);
    for (let j = 0; j < 10; j++) {
      const frac = start + 0.01 * j + 0.005 * rng.uniform(); // increasing, < 0.9
      const nano = String(Math.floor(frac * 1e9)).padStart(9, '0');
      const more = String(Math.floor(rng.uniform() * 1e6)).padStart(6, '0');
      const freqText = (550 + 2850 * rng.uniform()).toFixed(3);
      const errText = (0.1 + 1.9 * rng.uniform()).toFixed(4);
      const freq = Number(freqText);
      const err = Number(errText);
      const residual = offsetUs + (K_CONVENTIONAL * dm * 1e6) / (freq * freq) + err * rng.normal();
      chunk += `BENCH-${p + 1},${day}.${nano}${more},${freqText},${errText},${residual.toFixed(6)}\n`;
      rows++;
    }
    if (chunk.length > 1 << 20) {
      writeSync(fd, chunk);
      chunk = '';
    }
  }
  writeSync(fd, chunk);
  closeSync(fd);
  return rows;
}

/** Band edges (MHz) of the small batch tables: four receivers' worth of the 550–3400 MHz range. */
const BATCH_BANDS = [
  [550, 750],
  [1100, 1500],
  [1900, 2300],
  [2900, 3400],
];

/**
 * The batch's inputs: `count` small residual tables DIR/in/job-NNNNNN.csv, each one visit of
 * 10 arrival times of source BENCH-B within 0.1 day, spread round-robin over 2–4 adjacent bands
 * of BATCH_BANDS (frequency uniform inside its band, so each visit has a lever arm), with the
 * same model as writeTable: per job an offset (±10 µs) and 0.001 ≤ |ΔDM| ≤ 0.02 pc cm⁻³; per
 * row σ uniform in 0.1–2 µs and residual_us = offset + K·ΔDM·1e6/ν² + σ·N(0,1). Seeded apart
 * from the large table. Also writes DIR/manifest.json (one dm-fit job per file by a glob).
 * Returns the job names in sorted order.
 */
function writeBatchInputs(dir, count) {
  const rng = seededRandom(SEED + 4);
  mkdirSync(join(dir, 'in'), { recursive: true });
  const width = Math.max(6, String(count - 1).length);
  const names = [];
  for (let j = 0; j < count; j++) {
    const nBands = 2 + Math.floor(3 * rng.uniform()); // 2, 3 or 4
    const firstBand = Math.floor(rng.uniform() * (BATCH_BANDS.length - nBands + 1));
    const day = 50000 + j;
    const start = 0.1 + 0.7 * rng.uniform();
    const offsetUs = 20 * (rng.uniform() - 0.5);
    const dm = (0.001 + 0.019 * rng.uniform()) * (rng.uniform() < 0.5 ? -1 : 1);
    let text = 'source,mjd,freq_mhz,err_us,residual_us\n';
    for (let r = 0; r < 10; r++) {
      const [lo, hi] = BATCH_BANDS[firstBand + (r % nBands)];
      const frac = start + 0.01 * r + 0.005 * rng.uniform();
      const nano = String(Math.floor(frac * 1e9)).padStart(9, '0');
      const more = String(Math.floor(rng.uniform() * 1e6)).padStart(6, '0');
      const freqText = (lo + (hi - lo) * rng.uniform()).toFixed(3);
      const errText = (0.1 + 1.9 * rng.uniform()).toFixed(4);
      const freq = Number(freqText);
      const err = Number(errText);
      const residual = offsetUs + (K_CONVENTIONAL * dm * 1e6) / (freq * freq) + err * rng.normal();
      text += `BENCH-B,${day}.${nano}${more},${freqText},${errText},${residual.toFixed(6)}\n`;
    }
    const name = `job-${String(j).padStart(width, '0')}`;
    writeFileSync(join(dir, 'in', `${name}.csv`), text);
    names.push(name);
  }
  writeFileSync(
    join(dir, 'manifest.json'),
    JSON.stringify({ jobs: [{ analysis: 'dm-fit', input: 'in/*.csv' }] }) + '\n',
  );
  return names;
}

/**
 * A sample of the batch's jobs (up to `size`, evenly spread over the sorted list, first and last
 * included), Sightline's result against the Python loop's, with compareVisits (each job a
 * "source" of its own): the same DM_REL_TOL bar as the large table.
 */
function compareBatch(names, sightlineDir, numpyDir, size) {
  const n = names.length;
  const take = Math.min(n, size);
  const picks = [
    ...new Set(
      Array.from({ length: take }, (_, i) => Math.round((i * (n - 1)) / Math.max(1, take - 1))),
    ),
  ];
  const ours = new Map();
  const theirs = new Map();
  const problems = [];
  for (const k of picks) {
    const name = names[k];
    const slFile = join(sightlineDir, `${name}.dm-fit.json`);
    const npFile = join(numpyDir, `${name}.json`);
    if (!existsSync(slFile) || !existsSync(npFile)) {
      problems.push(
        `${name}: result missing (Sightline ${existsSync(slFile)}, NumPy ${existsSync(npFile)})`,
      );
      continue;
    }
    ours.set(name, JSON.parse(readFileSync(slFile, 'utf8')).visits);
    theirs.set(
      name,
      JSON.parse(readFileSync(npFile, 'utf8')).visits.map((v) =>
        Object.fromEntries(Object.entries(v).map(([key, x]) => [key, x === null ? NaN : x])),
      ),
    );
  }
  const a = compareVisits(ours, theirs);
  return { sampled: picks.length, ...a, problems: [...problems, ...a.problems] };
}

// ---------------------------------------------------------------------------------------------
// agreement: the DM fits (1., 3.), the scattering τ (4.), the cube S/N curves (5.), the ACFs (6.)

/** numpy's per-visit CSV → Map source → visits in time order. */
function readNumpyVisits(path) {
  const lines = readFileSync(path, 'utf8').trimEnd().split('\n');
  const names = lines[0].replace(/^# sources: /, '').split(',');
  const cols = lines[1].split(',');
  const bySource = new Map();
  for (const line of lines.slice(2)) {
    const f = line.split(',');
    const rec = Object.fromEntries(cols.map((c, i) => [c, Number(f[i])]));
    const source = names[rec.source];
    if (!bySource.has(source)) bySource.set(source, []);
    bySource.get(source).push(rec);
  }
  return bySource;
}

/** Sightline's dm-fit JSON → Map source → visits in time order. */
function readSightlineVisits(path) {
  const fit = JSON.parse(readFileSync(path, 'utf8'));
  const bySource = new Map();
  for (const v of fit.visits) {
    if (!bySource.has(v.source)) bySource.set(v.source, []);
    bySource.get(v.source).push(v);
  }
  for (const list of bySource.values()) list.sort((a, b) => a.mjd_first - b.mjd_first);
  return { fit, bySource };
}

/**
 * Compare every visit. DM must agree to DM_REL_TOL (1e-6) relative (the brief's bar; it is not
 * loosened); the DM error and χ² are reported alongside. Returns the worst differences seen.
 */
function compareVisits(sightline, numpy) {
  const rel = (a, b) => Math.abs(a - b) / Math.max(Math.abs(a), Math.abs(b), Number.MIN_VALUE);
  const worst = { dm: 0, dm_err: 0, dm_err_scaled: 0, chi2: 0, offset_us: 0 };
  const problems = [];
  let compared = 0;
  for (const [source, ours] of sightline) {
    const theirs = numpy.get(source) ?? [];
    if (ours.length !== theirs.length) {
      problems.push(`${source}: Sightline has ${ours.length} visits, NumPy ${theirs.length}`);
      continue;
    }
    for (let i = 0; i < ours.length; i++) {
      const a = ours[i];
      const b = theirs[i];
      if (Math.abs(a.mjd_first - b.mjd_first) > 1e-6 || a.n_toas !== b.n_toas) {
        problems.push(
          `${source} visit ${i}: different visits (MJD ${a.mjd_first} vs ${b.mjd_first})`,
        );
        continue;
      }
      if (a.dm === null || Number.isNaN(b.dm)) {
        if ((a.dm === null) !== Number.isNaN(b.dm)) {
          problems.push(`${source} visit ${i}: fitted on one side only`);
        }
        continue;
      }
      compared++;
      for (const key of Object.keys(worst)) worst[key] = Math.max(worst[key], rel(a[key], b[key]));
      if (a.dof !== b.dof) problems.push(`${source} visit ${i}: dof ${a.dof} vs ${b.dof}`);
      if (!(rel(a.dm, b.dm) <= DM_REL_TOL) && problems.length < 20) {
        problems.push(`${source} visit ${i} (MJD ${a.mjd_first}): DM ${a.dm} vs ${b.dm}`);
      }
    }
  }
  for (const source of numpy.keys()) {
    if (!sightline.has(source)) problems.push(`${source}: only in the NumPy result`);
  }
  return { compared, worst, problems };
}

/**
 * τ per profile, Sightline against one scipy run, on the same .npy. "Constrained" is Sightline's
 * status 'fitted' with τ/σ_τ > 3, and for scipy a fit that returned with τ/σ_τ > 3 (finite
 * covariance). Where both are constrained: the relative difference |τ_S − τ_P|/τ_S (median and
 * max; the issue's bar on identical data is 1e-4) and that of the τ errors; for every profile
 * beyond 1e-4, which side reached the lower χ² (the better-converged fit) and by how much. Over
 * every profile both sides fitted: how often each side found the lower χ² (by more than 1e-3)
 * and the largest gap each way (a fit that stopped short or in another minimum). Against the
 * truth: the fraction of each side's constrained τ within 1σ and 3σ of the simulated τ.
 */
function compareScatter(sl, sp, truth) {
  const n = truth.tau_bins.length;
  const rel = (a, b) => Math.abs(a - b) / Math.max(Math.abs(a), Number.MIN_VALUE);
  const slConstrained = (k) => sl.status[k] === 'fitted' && sl.tau_bins[k] / sl.tau_err_bins[k] > 3;
  const spConstrained = (k) =>
    sp.status[k] === 'fitted' &&
    sp.tau_bins[k] !== null &&
    sp.tau_err_bins[k] !== null &&
    sp.tau_bins[k] / sp.tau_err_bins[k] > 3;
  const where = (k) => ({
    profile: k,
    visit: Math.floor(k / truth.bands),
    band: k % truth.bands,
    freq_mhz: truth.freqs_mhz[k % truth.bands],
    tau_true_bins: truth.tau_bins[k],
    sightline: {
      status: sl.status[k],
      tau_bins: sl.tau_bins[k],
      tau_err_bins: sl.tau_err_bins[k],
      chi2: sl.chi2[k],
    },
    scipy: {
      status: sp.status[k],
      tau_bins: sp.tau_bins[k],
      tau_err_bins: sp.tau_err_bins[k],
      chi2: sp.chi2[k],
    },
  });
  const tauRel = [];
  const errRel = [];
  let worst = -1;
  const beyond = { n: 0, sightline_lower_chi2: 0, scipy_lower_chi2: 0, max_chi2_gap: 0 };
  const onlySightline = [];
  const onlyScipy = [];
  const chi2 = {
    both_fitted: 0,
    sightline_lower: 0,
    scipy_lower: 0,
    worst_scipy_excess: 0,
    worst_scipy_at: null,
    worst_sightline_excess: 0,
    worst_sightline_at: null,
  };
  // n, within 1σ, within 3σ, simulated τ below a quarter of the simulated width
  const coverage = { sightline: [0, 0, 0, 0], scipy: [0, 0, 0, 0] };
  const cover = (c, tau, err, k) => {
    const t = truth.tau_bins[k];
    c[0]++;
    if (Math.abs(tau - t) <= err) c[1]++;
    if (Math.abs(tau - t) <= 3 * err) c[2]++;
    if (t < 0.25 * truth.width_periods[Math.floor(k / truth.bands)] * truth.nbin) c[3]++;
  };
  for (let k = 0; k < n; k++) {
    const a = slConstrained(k);
    const b = spConstrained(k);
    if (a) cover(coverage.sightline, sl.tau_bins[k], sl.tau_err_bins[k], k);
    if (b) cover(coverage.scipy, sp.tau_bins[k], sp.tau_err_bins[k], k);
    if (sp.status[k] === 'fitted' && sp.chi2[k] !== null && sl.status[k] !== 'failed') {
      chi2.both_fitted++;
      const gap = sp.chi2[k] - sl.chi2[k];
      if (gap > 1e-3) chi2.sightline_lower++;
      if (gap < -1e-3) chi2.scipy_lower++;
      if (gap > chi2.worst_scipy_excess) {
        chi2.worst_scipy_excess = gap;
        chi2.worst_scipy_at = k;
      }
      if (-gap > chi2.worst_sightline_excess) {
        chi2.worst_sightline_excess = -gap;
        chi2.worst_sightline_at = k;
      }
    }
    if (a && b) {
      const r = rel(sl.tau_bins[k], sp.tau_bins[k]);
      tauRel.push(r);
      errRel.push(rel(sl.tau_err_bins[k], sp.tau_err_bins[k]));
      if (worst < 0 || r > rel(sl.tau_bins[worst], sp.tau_bins[worst])) worst = k;
      if (r > 1e-4) {
        beyond.n++;
        const gap = sp.chi2[k] - sl.chi2[k];
        if (gap > 0) beyond.sightline_lower_chi2++;
        else if (gap < 0) beyond.scipy_lower_chi2++;
        if (Math.abs(gap) > Math.abs(beyond.max_chi2_gap)) beyond.max_chi2_gap = gap;
      }
    } else if (a) onlySightline.push(k);
    else if (b) onlyScipy.push(k);
  }
  const frac = ([m, one, three, small]) => ({
    n: m,
    within_1sigma: m ? one / m : null,
    within_3sigma: m ? three / m : null,
    true_tau_below_quarter_width: small,
  });
  return {
    compared: tauRel.length,
    tau_rel: {
      median: tauRel.length ? median(tauRel) : null,
      max: tauRel.length ? Math.max(...tauRel) : null,
      above_1e4: beyond.n,
    },
    tau_err_rel: {
      median: errRel.length ? median(errRel) : null,
      max: errRel.length ? Math.max(...errRel) : null,
    },
    above_1e4: beyond,
    worst: worst >= 0 ? where(worst) : null,
    chi2: {
      ...chi2,
      worst_scipy_at: chi2.worst_scipy_at === null ? null : where(chi2.worst_scipy_at),
      worst_sightline_at: chi2.worst_sightline_at === null ? null : where(chi2.worst_sightline_at),
    },
    constrained_on_one_side_only: {
      sightline: onlySightline.length,
      scipy: onlyScipy.length,
      examples: [...onlySightline.slice(0, 3), ...onlyScipy.slice(0, 3)].map(where),
    },
    truth: { sightline: frac(coverage.sightline), scipy: frac(coverage.scipy) },
  };
}

/**
 * The cube's S/N curve, Sightline against one NumPy run, trial by trial: |a − b| / max(|a|, |b|)
 * must be ≤ 1e-6 at every trial (the brief's bar, enforced like the DM agreement; a NaN counts as
 * a disagreement). The phase of each maximum (turns, wrapped) is compared for information.
 */
function compareCurves(sl, np, trialsDm) {
  const n = trialsDm.length;
  if (sl.snr.length !== n || np.snr.length !== n) {
    return {
      compared: 0,
      problems: [`curve lengths: Sightline ${sl.snr.length}, NumPy ${np.snr.length}, trials ${n}`],
    };
  }
  const rels = [];
  const problems = [];
  let worst = 0;
  let phaseDiff = 0;
  const argmax = (xs) => xs.reduce((b, x, j) => (x > xs[b] ? j : b), 0);
  for (let j = 0; j < n; j++) {
    const a = sl.snr[j];
    const b = np.snr[j];
    let rel = Math.abs(a - b) / Math.max(Math.abs(a), Math.abs(b), Number.MIN_VALUE);
    if (Number.isNaN(rel)) rel = Infinity;
    rels.push(rel);
    if (rel > rels[worst]) worst = j;
    if (!(rel <= 1e-6) && problems.length < 20) {
      problems.push(
        `trial ${j} (DM ${trialsDm[j]}): S/N ${a} vs ${b} (relative ${rel.toExponential(2)})`,
      );
    }
    const dp = sl.phase[j] - np.phase[j];
    phaseDiff = Math.max(phaseDiff, Math.abs(dp - Math.floor(dp + 0.5)));
  }
  const at = (j) => ({
    trial: j,
    dm: trialsDm[j],
    sightline: sl.snr[j],
    numpy: np.snr[j],
    rel: rels[j],
  });
  return {
    compared: n,
    max_rel: rels[worst],
    median_rel: median(rels),
    above_1e6: rels.filter((r) => !(r <= 1e-6)).length,
    worst: at(worst),
    max_phase_diff_turns: phaseDiff,
    best_trial: { sightline: argmax(sl.snr), numpy: argmax(np.snr) },
    problems,
  };
}

/**
 * A float64 little-endian C-order .npy file (format 1.0–3.0, as numpy.save and
 * shared/profiles/npy-write.ts write it) → { shape, data }. Anything else is refused by name.
 */
function readNpyF8(path) {
  const buf = readFileSync(path);
  const magic = [0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59];
  if (buf.length < 10 || magic.some((b, i) => buf[i] !== b)) fail(`${path}: not a .npy file`);
  const major = buf[6];
  const lenSize = major === 1 ? 2 : 4;
  const headerLen = lenSize === 2 ? buf.readUInt16LE(8) : buf.readUInt32LE(8);
  const start = 8 + lenSize + headerLen;
  const header = buf.toString('latin1', 8 + lenSize, start);
  const descr = /'descr':\s*'([^']*)'/.exec(header)?.[1];
  const fortran = /'fortran_order':\s*(True|False)/.exec(header)?.[1];
  const shapeText = /'shape':\s*\(([^)]*)\)/.exec(header)?.[1];
  if (descr !== '<f8' || fortran !== 'False' || shapeText === undefined) {
    fail(`${path}: expected a float64 ('<f8') C-order array, header ${header.trim()}`);
  }
  const shape = shapeText
    .split(',')
    .map((t) => t.trim())
    .filter(Boolean)
    .map(Number);
  const count = shape.reduce((a, b) => a * b, 1);
  if (buf.length !== start + 8 * count) {
    fail(`${path}: ${buf.length - start} data bytes for shape (${shape.join(', ')})`);
  }
  const data =
    (buf.byteOffset + start) % 8 === 0
      ? new Float64Array(buf.buffer, buf.byteOffset + start, count)
      : new Float64Array(buf.buffer.slice(buf.byteOffset + start, buf.byteOffset + buf.length));
  return { shape, data };
}

/**
 * The two ACFs (both [2·nchan − 1, 2·nsub − 1], zero lag at [nchan − 1, nsub − 1]), lag by lag:
 * NaN (too few pixel pairs) must be NaN on both sides, and every finite value must agree to
 * 1e-9 of Sightline's zero-lag value, |a − b| ≤ 1e-9·|ACF(0, 0)| (the brief's bar, enforced like
 * the DM agreement). Reports the largest and mean difference in those units and where the
 * largest is.
 */
function compareAcf(sl, np, nchan, nsub) {
  const [rows, cols] = sl.shape;
  if (rows !== 2 * nchan - 1 || cols !== 2 * nsub - 1 || np.shape.join() !== sl.shape.join()) {
    return {
      compared: 0,
      problems: [
        `shapes: Sightline ${sl.shape.join(' × ')}, NumPy ${np.shape.join(' × ')}, expected ${2 * nchan - 1} × ${2 * nsub - 1}`,
      ],
    };
  }
  const zero = sl.data[(nchan - 1) * cols + nsub - 1];
  const scale = Math.abs(zero);
  const problems = [];
  if (!(scale > 0 && Number.isFinite(scale))) problems.push(`zero-lag value ${zero}`);
  let compared = 0;
  let nanBoth = 0;
  let nanOnlySightline = 0;
  let nanOnlyNumpy = 0;
  let worst = 0;
  let worstAt = -1;
  let sum = 0;
  const lagOf = (i) => ({
    chan_lag: Math.floor(i / cols) - (nchan - 1),
    sub_lag: (i % cols) - (nsub - 1),
  });
  for (let i = 0; i < sl.data.length; i++) {
    const a = sl.data[i];
    const b = np.data[i];
    const an = Number.isNaN(a);
    const bn = Number.isNaN(b);
    if (an || bn) {
      if (an && bn) nanBoth++;
      else {
        if (an) nanOnlySightline++;
        else nanOnlyNumpy++;
        if (problems.length < 20) {
          const { chan_lag, sub_lag } = lagOf(i);
          problems.push(`lag (${chan_lag}, ${sub_lag}): Sightline ${a}, NumPy ${b}`);
        }
      }
      continue;
    }
    compared++;
    const d = Math.abs(a - b) / scale;
    sum += d;
    if (!(d <= worst)) {
      worst = d;
      worstAt = i;
    }
    if (!(d <= 1e-9) && problems.length < 20) {
      const { chan_lag, sub_lag } = lagOf(i);
      problems.push(
        `lag (${chan_lag}, ${sub_lag}): ${a} vs ${b} (${d.toExponential(2)} of the zero-lag value)`,
      );
    }
  }
  return {
    compared,
    nan_both: nanBoth,
    nan_only_sightline: nanOnlySightline,
    nan_only_numpy: nanOnlyNumpy,
    zero_lag: { sightline: zero, numpy: np.data[(nchan - 1) * cols + nsub - 1] },
    max_diff_over_zero_lag: worst,
    mean_diff_over_zero_lag: compared ? sum / compared : null,
    worst:
      worstAt >= 0
        ? { ...lagOf(worstAt), sightline: sl.data[worstAt], numpy: np.data[worstAt] }
        : null,
    problems,
  };
}

// ---------------------------------------------------------------------------------------------
// main

const machine = {
  node: process.version,
  numpy: null, // filled in from the NumPy script's own report
  scipy: null, // filled in from the scipy script's own report
  python: null,
  nproc: (() => {
    const r = spawnSync('nproc', { encoding: 'utf8' });
    return r.status === 0 ? Number(r.stdout.trim()) : availableParallelism();
  })(),
  cpu: cpus()[0]?.model ?? 'unknown',
  memory_gib: Math.round(totalmem() / 2 ** 30),
  platform: `${process.platform} ${process.arch}`,
  // the machine is shared: the load when the run started, for the record
  load_average_at_start: (await import('node:os')).loadavg().map((x) => Number(x.toFixed(2))),
  // this machine sets these for numpy's correctness; left as found, reported for the record
  openblas_env: Object.fromEntries(
    Object.entries(process.env).filter(([k]) => k.startsWith('OPENBLAS_')),
  ),
  rss_method: RSS_METHOD === 'time' ? `${GNU_TIME} -f %M` : 'getrusage ru_maxrss (child)',
};
// what was measured: the working tree (the CLI is rebuilt by `npm run bench`), so record the
// commit and any uncommitted changes to the code under test
const git = (...args) => {
  const r = spawnSync('git', args, { cwd: ROOT, encoding: 'utf8' });
  return r.status === 0 ? r.stdout.trimEnd() : null; // keep porcelain's leading columns
};
const code = {
  commit: git('rev-parse', '--short', 'HEAD'),
  uncommitted: (git('status', '--porcelain', '--', 'shared', 'cli', 'bin') ?? '')
    .split('\n')
    .filter(Boolean)
    .map((l) => l.slice(3)),
};

const dir = mkdtempSync(join(tmpdir(), 'sightline-bench-'));
const cleanup = () => {
  if (!KEEP) rmSync(dir, { recursive: true, force: true });
};
process.on('exit', cleanup);
rssDir = join(dir, 'rss');
mkdirSync(rssDir);

// The CLI as built when the run starts (`npm run bench` builds it), copied beside the data with
// the launcher and package.json (node_modules linked): a rebuild of dist/cli while the benchmark
// runs, for other work in the same checkout, can neither break a run nor change the code measured
// between repetitions.
const app = join(dir, 'app');
for (const need of ['dist/cli/main.js', 'dist/cli/batch-worker.js']) {
  if (!existsSync(join(ROOT, need))) fail(`${need} is missing: build the CLI (node cli/build.mjs)`);
}
mkdirSync(join(app, 'dist'), { recursive: true });
cpSync(join(ROOT, 'dist/cli'), join(app, 'dist/cli'), { recursive: true });
cpSync(join(ROOT, 'bin'), join(app, 'bin'), { recursive: true });
copyFileSync(join(ROOT, 'package.json'), join(app, 'package.json'));
symlinkSync(join(ROOT, 'node_modules'), join(app, 'node_modules'), 'dir');
const SIGHTLINE = join(app, 'bin', 'sightline');
const tStart = now();

const { build } = await import('esbuild');
/** Bundle tests/bench/NAME.ts into the temporary folder with the CLI's esbuild settings. */
async function bundle(name) {
  const outfile = join(dir, `${name}.mjs`);
  await build({
    entryPoints: [join(BENCH, `${name}.ts`)],
    outfile,
    bundle: true,
    platform: 'node',
    target: 'node20',
    format: 'esm',
    logLevel: 'warning',
    banner: {
      js: "import { createRequire as __createRequire } from 'node:module'; const require = __createRequire(import.meta.url);",
    },
  });
  return outfile;
}
const json = (r) => ({ ...JSON.parse(r.stdout), wall_s: r.wallS, rss_kib: r.rssKiB });

// ---------------------------------------------------------------------------------------------
// 1. DM fits: fit only and end to end, every visit compared

const toas = join(dir, 'toas.csv');
let t0 = now();
const nRows = writeTable(toas, N_VISITS);
log(
  `wrote ${nRows} rows in ${N_VISITS} visits (${(statSync(toas).size / 1e6).toFixed(1)} MB) to ${toas} in ${secondsSince(t0).toFixed(1)} s`,
);
const fitOnlyJs = await bundle('fit-only');
const sightlineOut = join(dir, 'sightline-fit.json');
const numpyOut = join(dir, 'numpy-visits.csv');
const dmRuns = { fit_only: [], end_to_end: [], numpy: [] };
for (let r = 0; r < REPEAT; r++) {
  log(`DM fits, repetition ${r + 1}/${REPEAT}: fit only (Sightline), end to end (both)`);
  dmRuns.fit_only.push(json(run(process.execPath, [fitOnlyJs, toas], 'fit-only (bundled)')));
  rmSync(sightlineOut, { force: true });
  const e2e = run(
    process.execPath,
    [SIGHTLINE, 'dm', 'fit', toas, '--json', '--out', sightlineOut, '--quiet'],
    'sightline dm fit',
  );
  dmRuns.end_to_end.push({ wall_s: e2e.wallS, rss_kib: e2e.rssKiB });
  dmRuns.numpy.push(
    json(run(PYTHON, [join(BENCH, 'dm_fit_numpy.py'), toas, '--out', numpyOut], 'numpy')),
  );
}
const numpyReport = dmRuns.numpy.at(-1);
machine.numpy = numpyReport.numpy_version;
machine.python = numpyReport.python_version;
log('comparing every visit');
const { fit: sightlineFit, bySource } = readSightlineVisits(sightlineOut);
const agreement = compareVisits(bySource, readNumpyVisits(numpyOut));
const firstDms = numpyReport.first_dms.map((b) => {
  const a = bySource.get(b.source)?.find((v) => Math.abs(v.mjd_first - b.mjd_first) < 1e-6);
  return { source: b.source, mjd_first: b.mjd_first, sightline: a?.dm ?? null, numpy: b.dm };
});

// ---------------------------------------------------------------------------------------------
// 2. cold start, alternating, one unrecorded warm-up each (file cache)

log(`cold start, ${COLD_RUNS} runs each`);
const delayArgs = [SIGHTLINE, 'delay', '--dm', '100', '--freq', '1400'];
run(process.execPath, delayArgs, 'sightline delay');
run(process.execPath, ['-e', ''], "node -e ''");
const cold = { sightline: [], node: [] };
for (let r = 0; r < COLD_RUNS; r++) {
  cold.sightline.push(run(process.execPath, delayArgs, 'sightline delay'));
  cold.node.push(run(process.execPath, ['-e', ''], "node -e ''"));
}

// ---------------------------------------------------------------------------------------------
// 3. batch: many small DM fits, `sightline batch` against a Python loop in one process

const batchDir = join(dir, 'batch');
t0 = now();
const batchNames = writeBatchInputs(batchDir, BATCH_JOBS);
log(`batch: wrote ${BATCH_JOBS} small tables in ${secondsSince(t0).toFixed(1)} s`);
const batchIn = join(batchDir, 'in');
const batchManifest = join(batchDir, 'manifest.json');
const batchSlOut = join(batchDir, 'out-sightline');
const batchNpOut = join(batchDir, 'out-numpy');
const batchLines = join(batchDir, 'sightline-lines.jsonl');
const batchRuns = { sightline: [], numpy: [] };
for (let r = 0; r < REPEAT; r++) {
  log(`batch, repetition ${r + 1}/${REPEAT}: ${BATCH_JOBS} jobs each side`);
  rmSync(batchSlOut, { recursive: true, force: true });
  rmSync(batchNpOut, { recursive: true, force: true });
  const sl = run(
    process.execPath,
    [SIGHTLINE, 'batch', batchManifest, '--out', batchSlOut, '--quiet'],
    'sightline batch',
    { stdoutFile: batchLines },
  );
  const status = { done: 0, skipped: 0, failed: 0 };
  for (const line of readFileSync(batchLines, 'utf8').split('\n')) {
    if (line) status[JSON.parse(line).status]++;
  }
  if (status.done !== BATCH_JOBS) {
    fail(`sightline batch: ${JSON.stringify(status)} of ${BATCH_JOBS} jobs (all should be done)`);
  }
  batchRuns.sightline.push({ wall_s: sl.wallS, rss_kib: sl.rssKiB, status });
  batchRuns.numpy.push(
    json(run(PYTHON, [join(BENCH, 'dm_batch_numpy.py'), batchIn, batchNpOut], 'numpy batch')),
  );
  const written = readdirSync(batchNpOut).filter((f) => f.endsWith('.json')).length;
  if (written !== BATCH_JOBS) fail(`numpy batch wrote ${written} of ${BATCH_JOBS} results`);
}
log('batch: comparing a sample of the jobs');
const batchAgreement = compareBatch(batchNames, batchSlOut, batchNpOut, 1000);
const batchThreads = Math.min(machine.nproc, BATCH_JOBS);

// ---------------------------------------------------------------------------------------------
// 4. scattering: the same profiles fitted by Sightline and by scipy's curve_fit

log(`scattering: writing ${SCATTER_VISITS} visits × 64 bands × 1024 bins`);
const SCATTER_SEED = SEED + 1;
const scatterDataJs = await bundle('scatter-data');
const scatterFitJs = await bundle('scatter-fit-only');
const scatterData = JSON.parse(
  run(
    process.execPath,
    [scatterDataJs, dir, String(SCATTER_VISITS), String(SCATTER_SEED)],
    'scatter data',
  ).stdout,
);
const profilesNpy = join(dir, 'profiles.npy');
const truthJson = join(dir, 'truth.json');
const scatterTruth = JSON.parse(readFileSync(truthJson, 'utf8'));
log(
  `wrote ${scatterData.n_profiles} profiles (${(scatterData.bytes / 1e6).toFixed(1)} MB) in ${scatterData.write_s.toFixed(1)} s`,
);
const slScatterOut = join(dir, 'scatter-sightline.json');
const scipyRun = (jac) => {
  const out = join(dir, `scatter-scipy-${jac}.json`);
  const report = json(
    run(
      PYTHON,
      [join(BENCH, 'scatter_fit_scipy.py'), profilesNpy, truthJson, out, '--jac', jac],
      `scatter fit (scipy, ${jac})`,
    ),
  );
  return { report, fits: JSON.parse(readFileSync(out, 'utf8')) };
};
// the per-fit times summed over the profiles Sightline reports as measured ('fitted'): leaves
// out the upper-limit search Sightline runs for unconstrained τ (scipy has none)
const sumWhere = (times, keep) => times.reduce((s, t, k) => (keep(k) ? s + t : s), 0);
const scatterRuns = { sightline: [], scipy_fd: [], scipy_analytic: [], measured: [] };
let slFits;
let scipyFd;
let scipyAn;
for (let r = 0; r < REPEAT; r++) {
  log(
    `scattering, repetition ${r + 1}/${REPEAT}: ${scatterData.n_profiles} profiles, Sightline, scipy (forward differences), scipy (analytic Jacobian)`,
  );
  scatterRuns.sightline.push(
    json(
      run(
        process.execPath,
        [scatterFitJs, profilesNpy, truthJson, slScatterOut],
        'scatter fit (Sightline)',
      ),
    ),
  );
  slFits = JSON.parse(readFileSync(slScatterOut, 'utf8'));
  scipyFd = scipyRun('fd');
  scipyAn = scipyRun('analytic');
  scatterRuns.scipy_fd.push(scipyFd.report);
  scatterRuns.scipy_analytic.push(scipyAn.report);
  const isMeasured = (k) => slFits.status[k] === 'fitted';
  scatterRuns.measured.push({
    n: slFits.status.filter((s) => s === 'fitted').length,
    sightline_s: sumWhere(slFits.fit_s, isMeasured),
    scipy_fd_s: sumWhere(scipyFd.fits.fit_s, isMeasured),
    scipy_analytic_s: sumWhere(scipyAn.fits.fit_s, isMeasured),
  });
}
machine.scipy = scipyFd.report.scipy_version;
log('comparing τ per profile');
const scatterAgreement = {
  scipy_fd: compareScatter(slFits, scipyFd.fits, scatterTruth),
  scipy_analytic: compareScatter(slFits, scipyAn.fits, scatterTruth),
};
const slScatter = scatterRuns.sightline.at(-1);
const firstTaus = Array.from({ length: Math.min(5, scatterTruth.bands) }, (_, b) => ({
  band: b,
  freq_mhz: scatterTruth.freqs_mhz[b],
  tau_true_bins: scatterTruth.tau_bins[b],
  sightline: {
    tau_bins: slFits.tau_bins[b],
    tau_err_bins: slFits.tau_err_bins[b],
    status: slFits.status[b],
  },
  scipy: { tau_bins: scipyFd.fits.tau_bins[b], tau_err_bins: scipyFd.fits.tau_err_bins[b] },
}));

// ---------------------------------------------------------------------------------------------
// 5. cube DM refinement: the same Fourier shifts and sums over trial DMs, Sightline and NumPy

const CUBE_SEED = SEED + 2;
log(`cube: writing 1024 channels × 2048 bins and ${CUBE_TRIALS} trial DMs`);
const cubeDataJs = await bundle('cube-data');
const refineOnlyJs = await bundle('refine-only');
const cubeData = JSON.parse(
  run(process.execPath, [cubeDataJs, dir, String(CUBE_TRIALS), String(CUBE_SEED)], 'cube data')
    .stdout,
);
const cubeNpy = join(dir, 'cube.npy');
const cubeTemplateNpy = join(dir, 'cube-template.npy');
const cubeTruthJson = join(dir, 'cube-truth.json');
const cubeTruth = JSON.parse(readFileSync(cubeTruthJson, 'utf8'));
log(
  `wrote a ${cubeData.nchan} × ${cubeData.nbin} cube (${(cubeData.bytes / 1e6).toFixed(1)} MB) in ${cubeData.write_s.toFixed(1)} s`,
);
const slCubeOut = join(dir, 'cube-sightline.json');
const numpyCubeRun = (form) => {
  const out = join(dir, `cube-numpy-${form}.json`);
  const report = json(
    run(
      PYTHON,
      [
        join(BENCH, 'dm_refine_numpy.py'),
        cubeNpy,
        cubeTemplateNpy,
        cubeTruthJson,
        slCubeOut,
        out,
        '--form',
        form,
      ],
      `cube refine (NumPy, ${form})`,
    ),
  );
  return { report, curve: JSON.parse(readFileSync(out, 'utf8')) };
};
const cubeRuns = { sightline: [], numpy_cexp: [], numpy_trig: [] };
const cubeProblems = [];
let cubeAgreement;
let slCurve;
let npCubeExp;
let npCubeTrig;
for (let r = 0; r < REPEAT; r++) {
  log(
    `cube, repetition ${r + 1}/${REPEAT}: Sightline, NumPy (--form cexp), NumPy (--form trig), ${CUBE_TRIALS} trials each`,
  );
  cubeRuns.sightline.push(
    json(
      run(
        process.execPath,
        [refineOnlyJs, cubeNpy, cubeTemplateNpy, cubeTruthJson, slCubeOut],
        'cube refine (Sightline)',
      ),
    ),
  );
  slCurve = JSON.parse(readFileSync(slCubeOut, 'utf8'));
  npCubeExp = numpyCubeRun('cexp');
  npCubeTrig = numpyCubeRun('trig');
  cubeRuns.numpy_cexp.push(npCubeExp.report);
  cubeRuns.numpy_trig.push(npCubeTrig.report);
  // every repetition's curves are checked (each NumPy run takes that run's Sightline weights)
  cubeAgreement = {
    numpy_cexp: compareCurves(slCurve, npCubeExp.curve, cubeTruth.trials_dm),
    numpy_trig: compareCurves(slCurve, npCubeTrig.curve, cubeTruth.trials_dm),
  };
  for (const [form, a] of Object.entries(cubeAgreement)) {
    for (const p of a.problems) cubeProblems.push(`repetition ${r + 1}, ${form}: ${p}`);
  }
}
const slCube = cubeRuns.sightline.at(-1);

// ---------------------------------------------------------------------------------------------
// 6. dynamic-spectrum ACF: the same mask-aware autocorrelation, Sightline and NumPy

const ACF_SEED = SEED + 3;
log('ACF: writing a 1024 × 4096 dynamic spectrum with ≈ 5 % of its pixels flagged');
const acfDataJs = await bundle('acf-data');
const acfOnlyJs = await bundle('acf-only');
const acfData = JSON.parse(
  run(process.execPath, [acfDataJs, dir, String(ACF_SEED)], 'ACF data').stdout,
);
const acfNpy = join(dir, 'acf-dynspec.npy');
const acfTruthJson = join(dir, 'acf-truth.json');
const acfTruth = JSON.parse(readFileSync(acfTruthJson, 'utf8'));
log(
  `wrote a ${acfData.nchan} × ${acfData.nsub} spectrum (${(acfData.bytes / 1e6).toFixed(1)} MB, ${(100 * acfData.flagged_fraction).toFixed(2)} % flagged) in ${acfData.write_s.toFixed(1)} s`,
);
const slAcfOut = join(dir, 'acf-sightline.npy');
const npAcfOut = join(dir, 'acf-numpy.npy');
const acfRuns = { sightline: [], numpy: [] };
for (let r = 0; r < REPEAT; r++) {
  log(`ACF, repetition ${r + 1}/${REPEAT}: maskedAcf (Sightline), rfft2/irfft2 (NumPy)`);
  acfRuns.sightline.push(
    json(
      run(
        process.execPath,
        [acfOnlyJs, acfNpy, acfTruthJson, slAcfOut, '--repeat', '1'],
        'ACF (Sightline)',
      ),
    ),
  );
  acfRuns.numpy.push(
    json(
      run(
        PYTHON,
        [join(BENCH, 'acf_numpy.py'), acfNpy, npAcfOut, '--repeat', '1', '--min-pairs', '0.05'],
        'ACF (NumPy)',
      ),
    ),
  );
}
const slAcf = acfRuns.sightline.at(-1);
const npAcf = acfRuns.numpy.at(-1);
log('comparing the ACFs lag by lag');
const acfAgreement = compareAcf(
  readNpyF8(slAcfOut),
  readNpyF8(npAcfOut),
  acfData.nchan,
  acfData.nsub,
);
const acfProblems = acfAgreement.problems;

// ---------------------------------------------------------------------------------------------
// 7. report: one table

const pick = (runs, key) => runs.map((x) => x[key]);
const med = (runs, key) => median(pick(runs, key));
const SAME = 'same runs as above';
/**
 * One case of the table. target: the issue's bar on the ratio (null: information only); met is
 * ratio ≤ target. Peak memory: the largest over the repetitions of each side's process.
 */
const cases = [
  {
    name: `DM fit, fit only (${N_VISITS} visits)`,
    sightline_s: med(dmRuns.fit_only, 'fit_s'),
    reference: 'NumPy',
    reference_s: med(dmRuns.numpy, 'fit_s'),
    target: 1.0,
    repeats: REPEAT,
    sightline_rss: peakMiB(dmRuns.fit_only.map((x) => ({ rssKiB: x.rss_kib }))),
    reference_rss: peakMiB(dmRuns.numpy.map((x) => ({ rssKiB: x.rss_kib }))),
    notes: `fitDmVisits (sort, group, fit, one record per visit) on a ${nRows}-row table already in memory, one pass per process (fit-only.ts bundled like the CLI) vs the fit stage of dm_fit_numpy.py (lexsort, group, normal equations from np.add.reduceat), timed inside the end-to-end NumPy process; memory: the fit-only process (table loaded) and the NumPy end-to-end process`,
  },
  {
    name: `DM fit, end to end (${nRows} rows)`,
    sightline_s: med(dmRuns.end_to_end, 'wall_s'),
    reference: 'NumPy',
    reference_s: med(dmRuns.numpy, 'wall_s'),
    target: 1.0,
    repeats: REPEAT,
    sightline_rss: peakMiB(dmRuns.end_to_end.map((x) => ({ rssKiB: x.rss_kib }))),
    reference_rss: peakMiB(dmRuns.numpy.map((x) => ({ rssKiB: x.rss_kib }))),
    notes:
      '`sightline dm fit FILE --json --out OUT --quiet` vs `python3 dm_fit_numpy.py FILE --out OUT`: whole processes (start, read, validate, fit, write), wall clock',
  },
  {
    name: `DM batch, ${BATCH_JOBS} small jobs`,
    sightline_s: med(batchRuns.sightline, 'wall_s'),
    reference: 'Python loop',
    reference_s: med(batchRuns.numpy, 'wall_s'),
    target: 1.0,
    repeats: REPEAT,
    sightline_rss: peakMiB(batchRuns.sightline.map((x) => ({ rssKiB: x.rss_kib }))),
    reference_rss: peakMiB(batchRuns.numpy.map((x) => ({ rssKiB: x.rss_kib }))),
    notes: `\`sightline batch MANIFEST --out DIR --quiet\` (one dm-fit job per 10-row file, ${batchThreads} worker threads, the default: one per CPU; read, validate, fit, schema check, atomic result + resume sidecar, a JSON line per job) vs one python process looping over the same files with dm_fit_numpy.load/fit and json.dump (dm_batch_numpy.py; one thread: NumPy's element-wise operations on arrays this small do not use more); whole processes, wall clock`,
  },
  {
    name: `scatter fit (${scatterData.n_profiles} profiles)`,
    sightline_s: med(scatterRuns.sightline, 'total_s'),
    reference: 'curve_fit',
    reference_s: med(scatterRuns.scipy_fd, 'total_s'),
    target: 1.0,
    repeats: REPEAT,
    sightline_rss: peakMiB(scatterRuns.sightline.map((x) => ({ rssKiB: x.rss_kib }))),
    reference_rss: peakMiB(scatterRuns.scipy_fd.map((x) => ({ rssKiB: x.rss_kib }))),
    notes: `fitProfileBand(bins, { model: 'gauss', noise }) over every profile (${SCATTER_VISITS} visits × 64 bands × 1024 bins; starting values, LM with analytic Jacobian, the likelihood-ratio test against τ = 0 and, for undetected τ, the profile-likelihood upper limit), bundled like the CLI, vs scipy curve_fit (method 'lm', forward-difference Jacobian) on the same .npy; one pass per process, loading not timed`,
  },
  {
    name: '— vs curve_fit with analytic Jacobian',
    sightline_s: med(scatterRuns.sightline, 'total_s'),
    reference: 'curve_fit+jac',
    reference_s: med(scatterRuns.scipy_analytic, 'total_s'),
    target: null,
    repeats: REPEAT,
    sightline_rss: null,
    reference_rss: peakMiB(scatterRuns.scipy_analytic.map((x) => ({ rssKiB: x.rss_kib }))),
    notes:
      'the same Sightline runs vs curve_fit given the analytic Jacobian of the EMG; information only',
  },
  {
    name: '— bands with a measured τ only',
    sightline_s: med(scatterRuns.measured, 'sightline_s'),
    reference: 'curve_fit',
    reference_s: med(scatterRuns.measured, 'scipy_fd_s'),
    target: null,
    repeats: REPEAT,
    sightline_rss: null,
    reference_rss: null,
    notes: `per-fit times of the same runs summed over the ${scatterRuns.measured.at(-1).n} profiles Sightline reports as measured (status fitted; no upper-limit search) vs curve_fit (forward differences) on the same profiles; information only`,
  },
  {
    name: `cube DM refine (${CUBE_TRIALS} trials)`,
    sightline_s: med(cubeRuns.sightline, 'trials_s'),
    reference: 'NumPy, exp',
    reference_s: med(cubeRuns.numpy_cexp, 'trials_s'),
    target: 1.0,
    repeats: REPEAT,
    sightline_rss: peakMiB(cubeRuns.sightline.map((x) => ({ rssKiB: x.rss_kib }))),
    reference_rss: peakMiB(cubeRuns.numpy_cexp.map((x) => ({ rssKiB: x.rss_kib }))),
    notes: `shifter.snrAt(dm − dmApplied) for every trial DM on ${cubeData.nchan} channels × ${cubeData.nbin} bins (${slCube.h} harmonics; bundled like the CLI) vs NumPy's trial loop on the same cube, weights, noise and shifts: (Z * np.exp(1j * np.outer(2πdΔ, k))).sum(axis=0), np.fft.irfft, argmax, Newton to 1e-13 turns (--form cexp); set-up not timed here; memory: whole processes, cube loaded`,
  },
  {
    name: '— vs the tuned NumPy loop',
    sightline_s: med(cubeRuns.sightline, 'trials_s'),
    reference: 'NumPy, cos/sin',
    reference_s: med(cubeRuns.numpy_trig, 'trials_s'),
    target: 1.0,
    repeats: REPEAT,
    sightline_rss: null,
    reference_rss: peakMiB(cubeRuns.numpy_trig.map((x) => ({ rssKiB: x.rss_kib }))),
    notes:
      'the same Sightline runs vs the NumPy loop with the channel sum in real arithmetic on preallocated buffers: np.outer/np.cos/np.sin with out=, np.einsum sums (--form trig)',
  },
  {
    name: '— the channels’ FFT (set-up)',
    sightline_s: med(cubeRuns.sightline, 'fft_s'),
    reference: 'np.fft.rfft',
    reference_s: med(cubeRuns.numpy_cexp, 'rfft_s'),
    target: null,
    repeats: REPEAT,
    sightline_rss: null,
    reference_rss: null,
    notes: `harmonicsOf over ${cubeData.nchan} channels of ${cubeData.nbin} bins (fft.js, harmonics copied out) vs np.fft.rfft(cube, axis=1)[:, 1:H+1] plus the template's, in the same runs; information only`,
  },
  {
    name: `ACF ${acfData.nchan} × ${acfData.nsub}`,
    sightline_s: med(acfRuns.sightline, 'acf_s'),
    reference: 'NumPy rfft2',
    reference_s: med(acfRuns.numpy, 'acf_s'),
    target: 1.5,
    repeats: REPEAT,
    sightline_rss: peakMiB(acfRuns.sightline.map((x) => ({ rssKiB: x.rss_kib }))),
    reference_rss: peakMiB(acfRuns.numpy.map((x) => ({ rssKiB: x.rss_kib }))),
    notes: `maskedAcf(ds, ds.inputMask) on ${acfData.nchan} channels × ${acfData.nsub} sub-integrations (${(100 * acfData.flagged_fraction).toFixed(1)} % flagged; one complex 2-D FFT of ΔI + i·W padded to ${npAcf.padded.join(' × ')}, one inverse, crop, division by the rounded pair counts; bundled like the CLI) vs NumPy: ΔI, W, np.fft.rfft2 of each with the same padding, X.real**2 + X.imag**2, np.fft.irfft2 of each, the same crop and division; one pass per process, loading not timed; memory: whole processes, spectrum loaded`,
  },
  {
    name: 'cold start, `sightline delay`',
    sightline_s: median(cold.sightline.map((x) => x.wallS)),
    reference: "node -e ''",
    reference_s: median(cold.node.map((x) => x.wallS)),
    target: 3.0,
    repeats: COLD_RUNS,
    sightline_rss: peakMiB(cold.sightline),
    reference_rss: peakMiB(cold.node),
    notes: `\`sightline delay --dm 100 --freq 1400\` vs \`node -e ''\`, wall clock, median of ${COLD_RUNS} (--cold) runs each after one warm-up`,
  },
].map((c) => {
  const ratio = c.sightline_s / c.reference_s;
  return {
    name: c.name,
    sightline_median_s: c.sightline_s,
    reference: c.reference,
    reference_median_s: c.reference_s,
    ratio,
    target: c.target,
    met: c.target === null ? null : ratio <= c.target,
    sightline_peak_rss_mib: c.sightline_rss,
    reference_peak_rss_mib: c.reference_rss,
    repeats: c.repeats,
    notes: c.notes,
  };
});

const secs = (s) =>
  s < 1 ? `${(s * 1e3).toFixed(1)} ms` : s < 100 ? `${s.toFixed(2)} s` : `${s.toFixed(0)} s`;
const mib = (x) => (x === null ? '' : x.toFixed(0));
const rows = cases.map((c) => [
  c.name,
  secs(c.sightline_median_s),
  `${secs(c.reference_median_s)} (${c.reference})`,
  c.ratio < 0.1 ? c.ratio.toFixed(3) : c.ratio.toFixed(2),
  c.target === null ? '—' : `≤ ${c.target.toFixed(1)}`,
  c.met === null ? '—' : c.met ? 'yes' : '**no**',
  c.sightline_peak_rss_mib === null && c.reference_peak_rss_mib === null
    ? SAME
    : `${c.sightline_peak_rss_mib === null ? '(above)' : mib(c.sightline_peak_rss_mib)} / ${c.reference_peak_rss_mib === null ? '(above)' : mib(c.reference_peak_rss_mib)}`,
]);
const head = [
  'case',
  'Sightline (median)',
  'reference (median)',
  'ratio',
  'target',
  'met?',
  'peak RSS MiB (Sightline / reference)',
];
const widths = head.map((h, j) => Math.max(h.length, ...rows.map((r) => r[j].length)));
const line = (cells) => `| ${cells.map((c, j) => c.padEnd(widths[j])).join(' | ')} |\n`;
let out = `\nSightline benchmark: ratio = Sightline / reference (below 1: Sightline is faster); medians of ${REPEAT} repetitions (cold start: ${COLD_RUNS}), each a fresh process per side\n\n`;
out += line(head);
out += `| ${widths.map((w) => '-'.repeat(w)).join(' | ')} |\n`;
for (const r of rows) out += line(r);
out += `\nmemory: ${RSS_DESCRIPTION}; the largest over the repetitions\n`;
out += '\nwhat each number is:\n';
for (const c of cases) out += `  ${c.name}: ${c.notes}\n`;

const sciNote = (x, digits = 2) =>
  x === null || x === undefined ? 'n/a' : x.toExponential(digits);
const list = (xs) => xs.map(secs).join(', ');
out += '\nstage timings for context (inside the processes; every repetition):\n';
out += `  NumPy DM fit: load ${list(pick(dmRuns.numpy, 'load_s'))} (np.loadtxt), fit ${list(pick(dmRuns.numpy, 'fit_s'))}, write ${list(pick(dmRuns.numpy, 'write_s'))}; whole process ${list(pick(dmRuns.numpy, 'wall_s'))}\n`;
out += `  Sightline fit-only: load ${list(pick(dmRuns.fit_only, 'load_s'))} (csv-parse/sync + row validation into a ToaTable, not timed), fit ${list(pick(dmRuns.fit_only, 'fit_s'))}; \`dm fit\` whole process ${list(pick(dmRuns.end_to_end, 'wall_s'))}\n`;
out += `  data: ${nRows} rows, ${N_VISITS} visits; Sightline fitted ${sightlineFit.summary.n_fitted}/${sightlineFit.summary.n_visits}, NumPy ${numpyReport.n_visits - numpyReport.n_unconstrained}/${numpyReport.n_visits}\n`;
out += `  batch: Sightline ${list(pick(batchRuns.sightline, 'wall_s'))} (${batchThreads} worker threads); Python loop ${list(pick(batchRuns.numpy, 'loop_s'))} inside processes of ${list(pick(batchRuns.numpy, 'wall_s'))}; ${batchRuns.numpy.at(-1).n_fitted}/${BATCH_JOBS} jobs fitted by NumPy\n`;
out += `\nDM agreement over ${agreement.compared} fitted visits (largest relative difference):\n`;
out += `  DM ${agreement.worst.dm.toExponential(2)} (required ≤ ${DM_REL_TOL.toExponential(0)}), DM error ${agreement.worst.dm_err.toExponential(2)}, scaled error ${agreement.worst.dm_err_scaled.toExponential(2)}, χ² ${agreement.worst.chi2.toExponential(2)}, offset ${agreement.worst.offset_us.toExponential(2)}\n`;
out += '  first visits (source, MJD, Sightline DM, NumPy DM):\n';
for (const d of firstDms) {
  out += `    ${d.source} ${d.mjd_first.toFixed(6)} ${d.sightline} ${d.numpy}\n`;
}
for (const p of agreement.problems) out += `  DISAGREES: ${p}\n`;
out += `batch agreement over ${batchAgreement.compared} of ${batchAgreement.sampled} sampled jobs: DM ${batchAgreement.worst.dm.toExponential(2)} (required ≤ ${DM_REL_TOL.toExponential(0)}), DM error ${batchAgreement.worst.dm_err.toExponential(2)}, χ² ${batchAgreement.worst.chi2.toExponential(2)}\n`;
for (const p of batchAgreement.problems) out += `  DISAGREES: ${p}\n`;
const statusLine = Object.entries(slScatter.by_status)
  .map(([k, v]) => `${v.n} ${k} (${secs(v.s)}, ${((1e3 * v.s) / v.n).toFixed(1)} ms each)`)
  .join(', ');
out += `\nscattering: ${scatterData.n_profiles} profiles; Sightline (last run) ${statusLine}; runs ${list(pick(scatterRuns.sightline, 'total_s'))}\n`;
out += `  scipy ${scipyFd.report.scipy_version}: curve_fit 'lm', ${scipyFd.report.images * 2 + 1} images of the period; forward differences ${list(pick(scatterRuns.scipy_fd, 'total_s'))} (median ${scipyFd.report.median_nfev} function calls, ${scipyFd.report.n_failed} failed), analytic Jacobian ${list(pick(scatterRuns.scipy_analytic, 'total_s'))} (${scipyAn.report.n_failed} failed)\n`;
out += `  measured-τ bands: Sightline ${list(pick(scatterRuns.measured, 'sightline_s'))}; scipy on the same bands ${list(pick(scatterRuns.measured, 'scipy_fd_s'))} (forward differences), ${list(pick(scatterRuns.measured, 'scipy_analytic_s'))} (analytic)\n`;
for (const [label, a] of [
  ['scipy, forward differences', scatterAgreement.scipy_fd],
  ['scipy, analytic Jacobian', scatterAgreement.scipy_analytic],
]) {
  out += `  τ agreement with ${label}, over ${a.compared} profiles constrained on both sides (τ/σ_τ > 3): median ${sciNote(a.tau_rel.median)}, max ${sciNote(a.tau_rel.max)} relative (issue's bar 1e-4); τ error median ${sciNote(a.tau_err_rel.median)}, max ${sciNote(a.tau_err_rel.max)}\n`;
  out += `    beyond 1e-4: ${a.above_1e4.n} (lower χ² there: Sightline ${a.above_1e4.sightline_lower_chi2}, scipy ${a.above_1e4.scipy_lower_chi2}; largest χ²_scipy − χ²_Sightline ${a.above_1e4.max_chi2_gap.toPrecision(3)}); constrained on one side only: Sightline ${a.constrained_on_one_side_only.sightline}, scipy ${a.constrained_on_one_side_only.scipy}\n`;
  out += `    χ² over ${a.chi2.both_fitted} profiles fitted by both: lower by > 1e-3 for Sightline ${a.chi2.sightline_lower}, for scipy ${a.chi2.scipy_lower}; worst excess scipy ${a.chi2.worst_scipy_excess.toPrecision(3)} (profile ${a.chi2.worst_scipy_at?.profile ?? '-'}), Sightline ${a.chi2.worst_sightline_excess.toPrecision(3)} (profile ${a.chi2.worst_sightline_at?.profile ?? '-'})\n`;
}
const cov = scatterAgreement.scipy_fd.truth;
const pct = (x) => (x === null ? 'n/a' : `${(100 * x).toFixed(1)}%`);
for (const [label, c] of [
  ['Sightline', cov.sightline],
  ['scipy', cov.scipy],
]) {
  out += `  ${label}'s constrained τ against the simulated τ: ${c.n} bands, within 1σ ${pct(c.within_1sigma)}, within 3σ ${pct(c.within_3sigma)}; ${c.true_tau_below_quarter_width} of them simulated with τ below a quarter of the pulse width\n`;
}
const cubeBest = slCube.best_trial;
out += `\ncube DM refinement: ${cubeTruth.source}, ${cubeData.nchan} channels × ${cubeData.nbin} bins over ${cubeTruth.freqs_mhz[0].toFixed(2)}–${cubeTruth.freqs_mhz.at(-1).toFixed(2)} MHz, P = ${cubeTruth.period_s * 1e3} ms, dedispersed at DM ${cubeTruth.dm_applied}, true DM ${cubeTruth.dm_true.toFixed(4)}; ${CUBE_TRIALS} trials over ${cubeTruth.trials_dm[0].toFixed(4)}–${cubeTruth.trials_dm.at(-1).toFixed(4)} (step ${cubeTruth.trial_step.toExponential(3)})\n`;
out += `  Sightline: ${slCube.used_channels} channels used, weighted centre ${slCube.centre_mhz.toFixed(2)} MHz; best trial ${cubeBest} (DM ${slCube.best_dm.toFixed(5)}, S/N ${slCube.best_snr.toFixed(2)}); NumPy best trial ${npCubeExp.report.best_trial} (cexp), ${npCubeTrig.report.best_trial} (trig)\n`;
out += `  Sightline stages (every repetition): harmonicsOf ${list(pick(cubeRuns.sightline, 'fft_s'))}, prepareTemplate + analyseCube ${list(pick(cubeRuns.sightline, 'analyse_s'))}, weights + centre + shifts + DmShifter ${list(pick(cubeRuns.sightline, 'shifter_s'))}, trials ${list(pick(cubeRuns.sightline, 'trials_s'))}\n`;
for (const [label, rs] of [
  ['NumPy cexp', cubeRuns.numpy_cexp],
  ['NumPy trig', cubeRuns.numpy_trig],
]) {
  out += `  ${label} stages: rfft ${list(pick(rs, 'rfft_s'))}, cross-spectra ${list(pick(rs, 'setup_s'))}, trials ${list(pick(rs, 'trials_s'))}\n`;
}
for (const [label, a] of [
  ['NumPy cexp', cubeAgreement.numpy_cexp],
  ['NumPy trig', cubeAgreement.numpy_trig],
]) {
  out += `  S/N agreement with ${label} over ${a.compared} trials (last repetition): max ${sciNote(a.max_rel ?? null)} relative (required ≤ 1e-6 at every trial, every repetition), median ${sciNote(a.median_rel ?? null)}; worst at trial ${a.worst?.trial ?? '-'} (DM ${a.worst?.dm ?? '-'}: ${a.worst?.sightline ?? '-'} vs ${a.worst?.numpy ?? '-'}); phase of the maximum within ${sciNote(a.max_phase_diff_turns ?? null)} turns\n`;
}
for (const p of cubeProblems) out += `  DISAGREES: ${p}\n`;
out += `\nACF: ${acfTruth.source}, ${acfData.nchan} channels × ${acfData.nsub} sub-integrations (Δν_d ${acfTruth.dnu_d_mhz} MHz = ${acfTruth.dnu_d_mhz / acfTruth.df_mhz} channels, Δt_d ${acfTruth.dt_d_s} s = ${acfTruth.dt_d_s / acfTruth.dt_s} sub-integrations), ${acfTruth.flagged_pixels} pixels flagged (${(100 * acfTruth.flagged_fraction).toFixed(2)} %: ${acfTruth.flagged_channels.length} whole channels, ${acfTruth.n_blocks} blocks); padded to ${npAcf.padded.join(' × ')} (scipy.fft.next_fast_len of 2n − 1: ${npAcf.next_fast_len?.join(' × ') ?? 'n/a'})\n`;
out += `  Sightline maskedAcf runs ${list(pick(acfRuns.sightline, 'acf_s'))} (last: load ${secs(slAcf.load_s)}, not timed; ru_maxrss inside the process ${slAcf.max_rss_loaded_mb.toFixed(0)} MB after loading, ${slAcf.max_rss_first_pass_mb.toFixed(0)} MB after the pass); NumPy runs ${list(pick(acfRuns.numpy, 'acf_s'))} (last: prep ${secs(npAcf.stages_s.prep_s)}, transforms ${secs(npAcf.stages_s.transforms_s)}, crop ${secs(npAcf.stages_s.crop_s)}, divide ${secs(npAcf.stages_s.divide_s)}; ru_maxrss ${npAcf.max_rss_loaded_mb.toFixed(0)} MB after loading, ${npAcf.max_rss_first_pass_mb.toFixed(0)} MB after the pass)\n`;
out += `  agreement over ${acfAgreement.compared} finite lags: max ${sciNote(acfAgreement.max_diff_over_zero_lag ?? null)}, mean ${sciNote(acfAgreement.mean_diff_over_zero_lag ?? null)} of the zero-lag value ${acfAgreement.zero_lag?.sightline ?? '-'} (required ≤ 1e-9); NaN on both sides at ${acfAgreement.nan_both ?? '-'} lags, on one side only at ${(acfAgreement.nan_only_sightline ?? 0) + (acfAgreement.nan_only_numpy ?? 0)}\n`;
for (const p of acfProblems) out += `  DISAGREES: ${p}\n`;
out += `\ncode: commit ${code.commit}${code.uncommitted.length ? ` + uncommitted changes in ${code.uncommitted.join(', ')}` : ' (clean)'}\n`;
out += `machine: node ${machine.node}, numpy ${machine.numpy}, scipy ${machine.scipy} (python ${machine.python}), nproc ${machine.nproc}, ${machine.cpu}, ${machine.memory_gib} GiB, ${machine.platform}; load average at the start ${machine.load_average_at_start.join(', ')} (a shared machine: both sides of each ratio ran in the same minutes)\n`;
const blas = Object.entries(machine.openblas_env);
out += blas.length
  ? `OpenBLAS settings in the environment (left unchanged): ${blas.map(([k, v]) => `${k}=${v}`).join(' ')}\n`
  : 'no OPENBLAS_* settings in the environment\n';
out += `whole benchmark: ${(secondsSince(tStart) / 60).toFixed(1)} min\n`;
process.stdout.write(out);

const result = {
  created_utc: new Date().toISOString(),
  code,
  machine,
  options: {
    repeat: REPEAT,
    cold_runs: COLD_RUNS,
    rss: RSS_DESCRIPTION,
  },
  data: {
    dm_fit: { rows: nRows, visits: N_VISITS, seed: SEED, gap_days: 0.5 },
    batch: {
      jobs: BATCH_JOBS,
      rows_per_job: 10,
      bands_per_job: [2, 4],
      bands_mhz: BATCH_BANDS,
      seed: SEED + 4,
      sightline_threads: batchThreads,
    },
    scatter: {
      visits: SCATTER_VISITS,
      bands: scatterTruth.bands,
      nbin: scatterTruth.nbin,
      profiles: scatterData.n_profiles,
      seed: SCATTER_SEED,
      alpha: scatterTruth.alpha,
      freq_mhz: [scatterTruth.freqs_mhz[0], scatterTruth.freqs_mhz.at(-1)],
      tau_550_periods: [0.01, 0.3],
      width_periods: [0.01, 0.02],
      peak_snr: [20, 100],
    },
    cube: {
      source: cubeTruth.source,
      nchan: cubeTruth.nchan,
      nbin: cubeTruth.nbin,
      seed: CUBE_SEED,
      freq_mhz: [cubeTruth.freqs_mhz[0], cubeTruth.freqs_mhz.at(-1)],
      period_s: cubeTruth.period_s,
      dm_applied: cubeTruth.dm_applied,
      dm_true: cubeTruth.dm_true,
      k: cubeTruth.k,
      noise: cubeTruth.noise,
      components: cubeTruth.components,
      trials: CUBE_TRIALS,
      trial_dm: [cubeTruth.trials_dm[0], cubeTruth.trials_dm.at(-1)],
      trial_step: cubeTruth.trial_step,
    },
    acf: {
      source: acfTruth.source,
      nchan: acfTruth.nchan,
      nsub: acfTruth.nsub,
      seed: ACF_SEED,
      f0_mhz: acfTruth.f0_mhz,
      df_mhz: acfTruth.df_mhz,
      dt_s: acfTruth.dt_s,
      dnu_d_mhz: acfTruth.dnu_d_mhz,
      dt_d_s: acfTruth.dt_d_s,
      noise: acfTruth.noise,
      flagged_pixels: acfTruth.flagged_pixels,
      flagged_fraction: acfTruth.flagged_fraction,
      flagged_channels: acfTruth.flagged_channels,
      n_blocks: acfTruth.n_blocks,
      padded: npAcf.padded,
      min_pairs: 0.05,
    },
  },
  cases,
  runs: {
    dm_fit: dmRuns,
    cold_start_s: {
      sightline: cold.sightline.map((x) => x.wallS),
      node: cold.node.map((x) => x.wallS),
    },
    batch: batchRuns,
    scatter: {
      ...scatterRuns,
      sightline_by_status_last: slScatter.by_status,
    },
    cube: cubeRuns,
    acf: acfRuns,
  },
  agreement: {
    dm_fit: { ...agreement, first_dms: firstDms },
    batch: batchAgreement,
    scatter: { ...scatterAgreement, first_taus: firstTaus },
    cube: cubeAgreement,
    acf: acfAgreement,
  },
};
let text = JSON.stringify(result, null, 2) + '\n';
try {
  // keep the file as `prettier --check` (npm run lint) wants it
  const prettier = await import('prettier');
  text = await prettier.format(text, { parser: 'json', printWidth: 100 });
} catch {
  // prettier missing: plain JSON is still valid
}
writeFileSync(join(BENCH, 'results.json'), text);
log(`results written to tests/bench/results.json${KEEP ? `; data kept in ${dir}` : ''}`);
if (agreement.problems.length) fail('Sightline and NumPy disagree (see above)');
if (batchAgreement.problems.length)
  fail('the batch results of Sightline and NumPy disagree (see above)');
if (cubeProblems.length) fail('the cube S/N curves of Sightline and NumPy disagree (see above)');
if (acfProblems.length) fail('the ACFs of Sightline and NumPy disagree (see above)');
