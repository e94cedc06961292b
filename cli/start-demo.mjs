// `npm start`: the review app with the fictional demo, every number from a real fit.
// 1. generate the demo data set with the project's seeded simulator (first run only);
// 2. fit it through the real CLI (DM per visit, DM series, corrected arrival times, scattering);
// 3. prepare the database (accounts, pulsars, robot tokens) and start the server;
// 4. push the results through the real CLI and API and review some of them as the lead, so
//    the review queue has work in it (first run only);
// 5. print the URL and the demo sign-ins, and keep serving until Ctrl-C.
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
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

const step = (text) => process.stdout.write(`• ${text}\n`);

// ── 1 and 2: data and fits ──
if (!existsSync(join(dir, 'cubes'))) {
  step(`generating the demo data set in ${dir}`);
  run(['demo', 'generate', '--out', dir, '--seed', '1', ...(existsSync(dir) ? ['--force'] : [])]);
}
mkdirSync(out, { recursive: true });
const catalogueFile = join(dir, 'pulsars.json');
const catalogue = JSON.parse(readFileSync(catalogueFile, 'utf8'));
const fitFile = (name, tag = 'fit') => join(out, `${name}.${tag}.json`);
const scatterPulsars = ['SBP-D', 'SBP-F'];
const scatterFile = (name) => join(out, `${name}.scatter.json`);

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
    const folder = join(dir, 'profiles', name);
    const cube = readdirSync(folder)
      .filter((f) => f.endsWith('.npy'))
      .sort()[10];
    run([
      'scatter',
      'fit',
      join(folder, cube),
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
  const r = await fetch(url + path, {
    method,
    headers: {
      authorization: `Bearer ${signIns.tokens[email]}`,
      ...(body ? { 'content-type': 'application/json' } : {}),
    },
    body: body ? JSON.stringify(body) : undefined,
    signal: AbortSignal.timeout(30_000),
  });
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
    `Fit files, corrected arrival times and scattering plots: ${out}/\nCtrl-C stops the server.\n`,
);
