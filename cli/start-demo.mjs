// `npm start` (until the review app exists): generate the fictional demo data set with the
// project's simulator and push it through the real CLI, printing the DM tables.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';

const bin = new URL('../bin/sightline', import.meta.url).pathname;
const dir = process.env.SIGHTLINE_DEMO_DIR ?? 'data/demo';
const out = join(dir, 'results');

function run(args, { show = true } = {}) {
  const r = spawnSync(process.execPath, [bin, ...args], {
    encoding: 'utf8',
    stdio: ['ignore', 'pipe', 'inherit'],
  });
  if (r.status !== 0) {
    process.stderr.write(`\nsightline ${args.join(' ')} exited with ${r.status}\n`);
    process.exit(r.status ?? 1);
  }
  if (show) process.stdout.write(r.stdout);
  return r.stdout;
}

// (re)generate when missing, or when an older data set lacks the profile cubes
if (!existsSync(join(dir, 'profiles')))
  run(['demo', 'generate', '--out', dir, '--seed', '1', ...(existsSync(dir) ? ['--force'] : [])], {
    show: false,
  });
mkdirSync(out, { recursive: true });
const catalogue = JSON.parse(readFileSync(join(dir, 'pulsars.json'), 'utf8'));
console.log(
  `${catalogue.observatory} · ${catalogue.group} — fictional demo data (seed ${catalogue.seed})\n`,
);
for (const p of catalogue.pulsars) {
  const toas = join(dir, 'toas', `${p.source}.csv`);
  console.log(`\n━━ ${p.source}: ${p.shows}`);
  run(
    [
      'dm',
      'fit',
      toas,
      '--clip',
      '5',
      '--quiet',
      '--json',
      '--out',
      join(out, `${p.source}.fit.json`),
    ],
    { show: false },
  );
  run(
    [
      'dm',
      'series',
      join(out, `${p.source}.fit.json`),
      '--smooth',
      'gp',
      '--solar',
      String(catalogue.solar_n0_cm3),
      '--positions',
      join(dir, 'pulsars.json'),
      '--quiet',
      '--json',
      '--out',
      join(out, `${p.source}.series.json`),
    ],
    { show: false },
  );
  run(['dm', 'fit', toas, '--clip', '5', '--quiet']);
  run(
    [
      'toas',
      'correct',
      toas,
      '--series',
      join(out, `${p.source}.series.json`),
      '--quiet',
      '--out',
      join(out, `${p.source}.corrected.csv`),
    ],
    { show: false },
  );
}
// scattering from one visit's profile cube of the two strongly scattered pulsars
for (const name of ['SBP-D', 'SBP-F']) {
  const folder = join(dir, 'profiles', name);
  const cube = readdirSync(folder)
    .filter((f) => f.endsWith('.npy'))
    .sort()[10];
  console.log(`\n━━ ${name}: scattering on the profiles of one visit (${cube})`);
  run([
    'scatter',
    'fit',
    join(folder, cube),
    '--quiet',
    '--plot',
    join(out, `${name}.scatter.png`),
  ]);
}
console.log(`\nResults (fits, series, corrected arrival times, scattering plots) are in ${out}/`);
