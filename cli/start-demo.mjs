// `npm start`: the review app with the fictional demo, every number from a real fit.
// 1. generate the demo data set with the project's seeded simulator (first run only);
// 2. fit it through the real CLI (DM per visit, DM series, corrected arrival times, scattering,
//    scintillation from dynamic spectra);
// 3. prepare the database (accounts, pulsars, robot tokens) and start the server;
// 4. push the results through the real CLI and API and review some of them as the lead, so
//    the review queue has work in it (first run only);
// 5. print the URL and the demo sign-ins, and keep serving until Ctrl-C.
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { join } from 'node:path';

const bin = new URL('../bin/sightline', import.meta.url).pathname;
const dataDir = process.env.SIGHTLINE_DATA_DIR ?? 'data';
const dir = process.env.SIGHTLINE_DEMO_DIR ?? join(dataDir, 'demo');
const out = join(dir, 'results');
const port = Number(process.env.PORT ?? 5180);
const host = process.env.HOST ?? '127.0.0.1';

function fail(message, code = 1) {
  process.stderr.write(`\nnpm start: ${message}\n`);
  process.exit(code);
}

function run(args, env = {}) {
  const r = spawnSync(process.execPath, [bin, ...args], {
    encoding: 'utf8',
    stdio: ['ignore', 'pipe', 'inherit'],
    env: { ...process.env, ...env },
  });
  if (r.status !== 0) fail(`sightline ${args.join(' ')} exited with ${r.status}`, r.status ?? 1);
  return r.stdout;
}

/**
 * Like run, without blocking: for analyses that may run side by side. `written` is the --out
 * file: exit 1 (the analysis ran but a check failed) with it written is a result too.
 */
function runAsync(args, written) {
  return new Promise((resolve) => {
    const child = spawn(process.execPath, [bin, ...args], {
      stdio: ['ignore', 'ignore', 'pipe'],
    });
    let stderr = '';
    child.stderr.setEncoding('utf8').on('data', (c) => (stderr += c));
    child.on('close', (code) => {
      if (code === 1 && written && existsSync(written)) {
        process.stdout.write(`  ${written}: ${stderr.trim().replace(/^sightline: /, '')}\n`);
      } else if (code !== 0) {
        process.stderr.write(stderr);
        fail(`sightline ${args.join(' ')} exited with ${code}`, code ?? 1);
      }
      resolve();
    });
  });
}

const step = (text) => process.stdout.write(`• ${text}\n`);

// ── 1 and 2: data and fits ──
if (!existsSync(join(dir, 'dynspec'))) {
  step(`generating the demo data set in ${dir}`);
  run(['demo', 'generate', '--out', dir, '--seed', '1', ...(existsSync(dir) ? ['--force'] : [])]);
}
mkdirSync(out, { recursive: true });
const catalogueFile = join(dir, 'pulsars.json');
const catalogue = JSON.parse(readFileSync(catalogueFile, 'utf8'));
const fitFile = (name, tag = 'fit') => join(out, `${name}.${tag}.json`);
const scatterPulsars = ['SBP-D', 'SBP-F'];
const scatterFile = (name) => join(out, `${name}.scatter.json`);
const npyFiles = (folder) =>
  readdirSync(folder)
    .filter((f) => f.endsWith('.npy'))
    .sort();
/** the visit whose profiles the scattering fit uses */
const scatterVisit = (name) => npyFiles(join(dir, 'profiles', name))[10];

if (!existsSync(join(out, 'done'))) {
  step('fitting every pulsar through the CLI (DM per visit, DM series, corrections, scattering)');
  for (const p of catalogue.pulsars) {
    const toas = join(dir, 'toas', `${p.source}.csv`);
    run(['dm', 'fit', toas, '--clip', '5', '--quiet', '--json', '--out', fitFile(p.source)]);
    // a first pass without clipping: the earlier version a newer approval supersedes
    run(['dm', 'fit', toas, '--quiet', '--json', '--out', fitFile(p.source, 'fit-noclip')]);
    run([
      'dm',
      'series',
      fitFile(p.source),
      '--smooth',
      'gp',
      '--solar',
      String(catalogue.solar_n0_cm3),
      '--positions',
      catalogueFile,
      '--quiet',
      '--json',
      '--out',
      fitFile(p.source, 'series'),
    ]);
    run([
      'toas',
      'correct',
      toas,
      '--series',
      fitFile(p.source, 'series'),
      '--quiet',
      '--out',
      join(out, `${p.source}.corrected.csv`),
    ]);
  }
  for (const name of scatterPulsars) {
    run([
      'scatter',
      'fit',
      join(dir, 'profiles', name, scatterVisit(name)),
      '--quiet',
      '--json',
      '--out',
      scatterFile(name),
      '--plot',
      join(out, `${name}.scatter.png`),
    ]);
  }
  writeFileSync(join(out, 'done'), 'all fits written\n');
}

// Scintillation: the first visits of three pulsars' dynamic spectra (SBP-F is strongly
// scattered: its scintles are unresolved), and the visit of a pulsar whose profiles the
// scattering fit used, with that fit beside it (--tails); side by side on the available cores.
const scintPulsars = ['SBP-B', 'SBP-E', 'SBP-F'];
const scintVisits = 4;
const scintJobs = [];
const scintFiles = {};
for (const name of scintPulsars) {
  const folder = join(dir, 'dynspec', name);
  const visits = npyFiles(folder);
  const chosen = visits.slice(0, scintVisits).map((f) => ({ f, tails: null }));
  if (scatterPulsars.includes(name)) {
    const same = visits.find((f) => f === scatterVisit(name));
    if (same && !visits.slice(0, scintVisits).includes(same))
      chosen.push({ f: same, tails: scatterFile(name) });
  }
  scintFiles[name] = [];
  for (const { f, tails } of chosen) {
    const target = join(out, f.replace(/\.npy$/, '.scint.json'));
    scintFiles[name].push(target);
    if (existsSync(target)) continue;
    scintJobs.push({
      args: [
        'scint',
        'analyse',
        join(folder, f),
        ...(tails ? ['--tails', tails] : []),
        '--quiet',
        '--json',
        '--out',
        target,
      ],
      target,
    });
  }
}
if (scintJobs.length) {
  step(`analysing ${scintJobs.length} dynamic spectra through the CLI (scintillation)`);
  const queue = [...scintJobs];
  const worker = async () => {
    while (queue.length) {
      const job = queue.shift();
      await runAsync(job.args, job.target);
    }
  };
  await Promise.all(
    Array.from({ length: Math.min(4, availableParallelism(), queue.length) }, worker),
  );
}

// ── 3: database and server ──
step('preparing the review database (accounts, pulsars, robot tokens)');
run(['demo', 'seed', '--data-dir', dataDir, '--catalogue', catalogueFile, '--quiet']);
const signIns = JSON.parse(readFileSync(join(dataDir, 'demo-sign-ins.json'), 'utf8'));

const server = spawn(
  process.execPath,
  [bin, 'serve', '--data-dir', dataDir, '--port', String(port), '--host', host],
  // request logs only for warnings: the console is for people here
  { stdio: ['ignore', 'inherit', 'inherit'], env: { ...process.env, LOG_LEVEL: 'warn' } },
);
let serverExited = false;
server.on('exit', (code) => {
  serverExited = true;
  if (!stopping) fail(`the server stopped (exit ${code})`);
});
let stopping = false;
for (const signal of ['SIGINT', 'SIGTERM'])
  process.on(signal, () => {
    stopping = true;
    server.kill('SIGTERM');
  });
server.on('close', () => stopping && process.exit(0));

const url = `http://${host}:${port}`;
async function waitForServer() {
  for (let i = 0; i < 300; i++) {
    if (serverExited) return;
    try {
      const r = await fetch(`${url}/api/health`, { signal: AbortSignal.timeout(2_000) });
      if (r.ok) return;
    } catch {
      // not up yet
    }
    await new Promise((r) => setTimeout(r, 100));
  }
  fail(`the server did not answer on ${url} within 30 s`);
}
await waitForServer();

async function api(email, method, path, body) {
  const send = () =>
    fetch(url + path, {
      method,
      headers: {
        authorization: `Bearer ${signIns.tokens[email]}`,
        ...(body ? { 'content-type': 'application/json' } : {}),
      },
      body: body ? JSON.stringify(body) : undefined,
      signal: AbortSignal.timeout(30_000),
    });
  let r;
  try {
    r = await send();
  } catch (e) {
    // a kept-alive connection the server closed while this script waited for the CLI (the
    // server closes idle ones after a few seconds): the request never reached it; send again
    if (e?.cause?.code !== 'UND_ERR_SOCKET') throw e;
    r = await send();
  }
  const json = await r.json();
  if (!r.ok) fail(`${method} ${path}: ${r.status} ${json.error?.message}`);
  return json;
}

// ── 4: push and review (first run only) ──
const existing = await api('lead@saltbush.test', 'GET', '/api/runs?page_size=1');
if (existing.total === 0) {
  step('pushing the results through `sightline runs push` as Ana and Ben');
  const push = (email, files, submit = true) =>
    JSON.parse(
      run(['runs', 'push', ...files, '--json', '--quiet', ...(submit ? ['--submit'] : [])], {
        SIGHTLINE_SERVER: url,
        SIGHTLINE_TOKEN: signIns.tokens[email],
      }),
    ).runs;
  const ana = ['SBP-A', 'SBP-B', 'SBP-C'];
  const ben = ['SBP-D', 'SBP-E', 'SBP-F'];
  const first = push('ana@saltbush.test', [fitFile('SBP-B', 'fit-noclip')]);
  const anaFits = push(
    'ana@saltbush.test',
    ana.map((n) => fitFile(n)),
  );
  const benFits = push(
    'ben@saltbush.test',
    ben.map((n) => fitFile(n)),
  );
  push(
    'ana@saltbush.test',
    catalogue.pulsars.map((p) => fitFile(p.source, 'series')),
    false,
  );
  const scatter = push('ben@saltbush.test', scatterPulsars.map(scatterFile));
  const anaScint = push('ana@saltbush.test', scintFiles['SBP-B']);
  push('ben@saltbush.test', [...scintFiles['SBP-E'], ...scintFiles['SBP-F']]);

  // the mid receiver's interference is remembered now: a later visit of SBP-B starts from it
  const later = npyFiles(join(dir, 'dynspec', 'SBP-B'))[scintVisits];
  const masked = join(out, later.replace(/\.npy$/, '.masked.scint.json'));
  step('analysing one more SBP-B visit from the mask the server remembers for its receiver');
  run(
    [
      'scint',
      'analyse',
      join(dir, 'dynspec', 'SBP-B', later),
      '--mask-from-server',
      '--quiet',
      '--json',
      '--out',
      masked,
    ],
    { SIGHTLINE_SERVER: url, SIGHTLINE_TOKEN: signIns.tokens['ana@saltbush.test'] },
  );
  push('ana@saltbush.test', [masked], false);

  step('reviewing as the lead: approvals, a baseline and its successor, one returned run');
  const review = (run, decision, comment = '') =>
    api('lead@saltbush.test', 'POST', `/api/runs/${run.id}/reviews`, {
      decision,
      version: run.version,
      comment,
    });
  const byPulsar = (list, name) => list.find((r) => r.pulsar === name);
  await review(first[0], 'approve', 'first baseline for the reference pulsar');
  await review(byPulsar(anaFits, 'SBP-B'), 'approve', 'clipped at 5σ: replaces the first pass');
  await review(byPulsar(anaFits, 'SBP-C'), 'approve', 'trend and annual term look right');
  await review(byPulsar(scatter, 'SBP-D'), 'approve', 'α consistent with the earlier visits');
  await review(anaScint[0], 'approve', 'first scintillation baseline for the reference pulsar');
  await review(
    byPulsar(benFits, 'SBP-E'),
    'return',
    'the plasma-lens event needs the chromatic fit (--scatter free) before this can go in',
  );
}

// ── 5: tell people how to get in ──
const runs = await api('lead@saltbush.test', 'GET', '/api/runs?page_size=1&state=in_review');
process.stdout.write(
  `\nSightline review app: ${url}/\n` +
    `${catalogue.observatory} · ${catalogue.group} — fictional demo data; ${runs.total} run(s) wait for review.\n\n` +
    `Sign in with any of these (password ${signIns.password}):\n` +
    signIns.accounts.map((a) => `  ${a.email.padEnd(22)} ${a.role}`).join('\n') +
    `\n\nFrom a shell (the lead's robot token is in ${join(dataDir, 'demo-sign-ins.json')}):\n` +
    `  curl -c cookies -H 'content-type: application/json' \\\n` +
    `    -d '{"email":"lead@saltbush.test","password":"${signIns.password}"}' ${url}/api/auth/sign-in/email\n` +
    `  curl -b cookies '${url}/api/runs?state=in_review'\n\n` +
    `Fit files, corrected arrival times, scattering plots and scintillation results: ${out}/\n` +
    `Ctrl-C stops the server.\n`,
);
