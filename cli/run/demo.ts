import {
  existsSync,
  mkdirSync,
  readdirSync,
  readFileSync,
  renameSync,
  rmSync,
  writeFileSync,
} from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { stringify } from 'csv-stringify/sync';
import { simulateDemo, type DemoDataSet } from '../../shared/sim/demo.js';
import { writeNpy } from '../../shared/profiles/npy-write.js';
import { DEMO_GROUP, DEMO_OBSERVATORY, RECEIVERS } from '../../shared/sim/scenario.js';
import { SOFTWARE, withProgress, type CommonOptions } from '../common.js';
import { usageError } from '../errors.js';

export interface DemoOptions extends CommonOptions {
  out: string;
  seed: number;
  force?: boolean;
}

/** The demo's batch manifest, beside the data it reads (its paths are relative to it). */
export const DEMO_MANIFEST = 'batch.yaml';
/** where that manifest's results go, inside the demo folder */
export const DEMO_BATCH_OUT = 'batch-results';

/** Trial DMs around a catalogue DM: wide enough for the demo's DM wander and scattering bias. */
function refineRange(dm: number): string {
  const half = dm < 100 ? 0.04 : dm < 200 ? 0.08 : 0.16;
  const step = half / 80;
  // as few decimals as the step needs
  let digits = 0;
  while (digits < 6 && Math.abs(Math.round(step * 10 ** digits) - step * 10 ** digits) > 1e-9)
    digits++;
  return `${(dm - half).toFixed(digits)}:${(dm + half).toFixed(digits)}:${step.toFixed(digits)}`;
}

/**
 * The batch manifest of the demo data set: every analysis `sightline batch` runs, over all six
 * pulsars. SBP-D's scattering tails show only with the low receiver, so its visits observed
 * without it give no τ(ν) law and are left out of the scattering fits (by name, from the data).
 */
export function demoManifest(data: DemoDataSet): string {
  const low = RECEIVERS.find((r) => r.name === 'low')!;
  const names = data.pulsars.map((p) => p.source);
  const scattered = ['SBP-D', 'SBP-F'].filter((n) => names.includes(n));
  const lowOnly = 'SBP-D';
  const noLow = (data.sets[names.indexOf(lowOnly)]?.profiles ?? [])
    .filter((prof) => !prof.freqs_mhz.some((f) => f >= low.loMhz && f <= low.hiMhz))
    .map((prof) => `profiles/${lowOnly}/${lowOnly}_${prof.mjd}.npy`);
  const tails = 'SBP-F';
  const others = names.filter((n) => n !== tails);
  const set = (list: string[]) => (list.length === 1 ? list[0] : `{${list.join(',')}}`);
  const lines = [
    '# Batch manifest of the fictional demo data set, written by `sightline demo generate`.',
    '#   sightline batch batch.yaml --jobs 4        (paths are relative to this file)',
    '# Every analysis over all six pulsars; a second run skips what is up to date. In file',
    '# options {out} is the results folder and {stem} the input name without its extension:',
    "# a job that reads another job's result runs after it.",
    `out: ${DEMO_BATCH_OUT}`,
    'jobs:',
    "  # DM per visit from each pulsar's timing residuals",
    '  - analysis: dm-fit',
    '    input: toas/*.csv',
    '  # DM and scattering together (chromatic fit) for the scattered pulsars',
    '  - name: chromatic',
    '    analysis: dm-fit',
    `    input: toas/${set(scattered)}.csv`,
    '    options: { scatter: free }',
    `  # DM series, smoothed, with the solar wind (N0 = ${data.solarN0} cm^-3) taken out`,
    '  - analysis: dm-series',
    '    input: toas/*.csv',
    `    options: { smooth: gp, solar: ${data.solarN0}, positions: pulsars.json }`,
    "  # arrival times corrected with each pulsar's own DM series",
    '  - analysis: toas-correct',
    '    input: toas/*.csv',
    "    options: { series: '{out}/{stem}.dm-series.json' }",
    `  # τ per band and the τ(ν) law where tails show; ${lowOnly}'s only with the low receiver`,
    '  - analysis: scatter-fit',
    `    input: profiles/${set(scattered)}/*.npy`,
    ...(noLow.length ? ['    exclude:', ...noLow.map((f) => `      - ${f}`)] : []),
    `  # scintillation of every visit; ${tails}'s beside τ from its profile tails`,
    '  - analysis: scint',
    `    input: dynspec/${set(others)}/*.npy`,
    '  - analysis: scint',
    `    input: dynspec/${tails}/*.npy`,
    "    options: { tails: '{out}/{stem}.scatter-fit.json' }",
    '  # DM by S/N over trial DMs around the catalogue DM, every profile cube',
    ...data.pulsars.flatMap((p) => [
      '  - name: refine',
      '    analysis: dm-refine',
      `    input: cubes/${p.source}/*.npy`,
      `    options: { range: '${refineRange(p.dm)}' }`,
    ]),
  ];
  return lines.join('\n') + '\n';
}

/**
 * Write the fictional demo data set (demo-scenario handout) from the seeded simulator: the
 * catalogue, one residual table per pulsar, the injected truth, profiles, cubes, dynamic spectra
 * and a batch manifest over all of it. Written into a temporary folder and renamed into place,
 * so a failure leaves nothing half-made.
 */
export function writeDemo(dir: string, seed: number, force = false): string[] {
  const target = resolve(dir);
  if (existsSync(target) && readdirSync(target).length > 0) {
    // --force replaces only an earlier demo data set, never an arbitrary folder
    if (!isDemoFolder(target)) {
      throw usageError(
        `${dir} exists, is not empty and is not a Sightline demo data set: choose another folder`,
      );
    }
    if (!force)
      throw usageError(`${dir} holds an earlier demo data set (pass --force to replace it)`);
  }
  const data = simulateDemo(seed);
  const temp = join(dirname(target), `.${process.pid}.demo.tmp`);
  rmSync(temp, { recursive: true, force: true });
  mkdirSync(join(temp, 'toas'), { recursive: true });
  mkdirSync(join(temp, 'truth'), { recursive: true });
  const files: string[] = [];
  const put = (rel: string, text: string) => {
    writeFileSync(join(temp, rel), text);
    files.push(join(dir, rel));
  };
  put(
    'pulsars.json',
    JSON.stringify(
      {
        observatory: DEMO_OBSERVATORY,
        group: DEMO_GROUP,
        note: 'Fictional demo data: every name and number is invented and simulated.',
        generated_by: SOFTWARE,
        seed,
        solar_n0_cm3: data.solarN0,
        receivers: RECEIVERS.map((r) => ({
          name: r.name,
          lo_mhz: r.loMhz,
          hi_mhz: r.hiMhz,
          channels: r.channels,
        })),
        pulsars: data.pulsars,
      },
      null,
      2,
    ) + '\n',
  );
  const columns = ['source', 'mjd', 'freq_mhz', 'err_us', 'residual_us', 'receiver'] as const;
  data.sets.forEach((set, i) => {
    const name = data.pulsars[i].source;
    mkdirSync(join(temp, 'profiles', name), { recursive: true });
    for (const prof of set.profiles) {
      const rel = `profiles/${name}/${name}_${prof.mjd}.npy`;
      writeFileSync(join(temp, rel), writeNpy(prof.bins, [prof.freqs_mhz.length, prof.nbin]));
      const sidecar = {
        source: prof.source,
        mjd: prof.mjd,
        period_s: prof.period_s,
        dm: prof.dm,
        freqs_mhz: prof.freqs_mhz,
      };
      writeFileSync(join(temp, `${rel}.json`), JSON.stringify(sidecar) + '\n');
    }
    files.push(join(dir, 'profiles', name) + '/');
    mkdirSync(join(temp, 'cubes', name), { recursive: true });
    for (const cube of set.cubes) {
      const rel = `cubes/${name}/${name}_${cube.mjd}.npy`;
      writeFileSync(join(temp, rel), writeNpy(cube.bins, [cube.freqs_mhz.length, cube.nbin]));
      const sidecar = {
        source: cube.source,
        mjd: cube.mjd,
        period_s: cube.period_s,
        dm: cube.dm,
        freqs_mhz: cube.freqs_mhz,
      };
      writeFileSync(join(temp, `${rel}.json`), JSON.stringify(sidecar) + '\n');
    }
    files.push(join(dir, 'cubes', name) + '/');
    mkdirSync(join(temp, 'dynspec', name), { recursive: true });
    for (const d of set.dynspecs) {
      const rel = `dynspec/${name}/${name}_${d.mjd}.npy`;
      writeFileSync(join(temp, rel), writeNpy(d.data, [d.nchan, d.nsub]));
      const sidecar = {
        source: d.source,
        mjd: d.mjd,
        receiver: d.receiver,
        freqs_mhz: { start: d.f0_mhz, step: d.df_mhz },
        times_s: { start: 0, step: d.dt_s },
      };
      writeFileSync(join(temp, `${rel}.json`), JSON.stringify(sidecar) + '\n');
    }
    files.push(join(dir, 'dynspec', name) + '/');
    put(
      `toas/${name}.csv`,
      stringify([columns as unknown as string[], ...set.toas.map((t) => columns.map((c) => t[c]))]),
    );
    put(`truth/${name}.json`, JSON.stringify(set.truth, null, 1) + '\n');
  });
  put(DEMO_MANIFEST, demoManifest(data));
  rmSync(target, { recursive: true, force: true });
  mkdirSync(dirname(target), { recursive: true });
  renameSync(temp, target);
  return files;
}

/** True when the folder holds a demo data set written by this command (its catalogue says so). */
function isDemoFolder(folder: string): boolean {
  try {
    const catalogue = JSON.parse(readFileSync(join(folder, 'pulsars.json'), 'utf8')) as {
      generated_by?: { name?: string };
      observatory?: string;
    };
    const known = new Set([
      'pulsars.json',
      'toas',
      'truth',
      'profiles',
      'cubes',
      'dynspec',
      'results',
      DEMO_MANIFEST,
      DEMO_BATCH_OUT,
    ]);
    return (
      catalogue.generated_by?.name === 'sightline' &&
      catalogue.observatory === DEMO_OBSERVATORY &&
      readdirSync(folder).every((f) => known.has(f))
    );
  } catch {
    return false;
  }
}

export async function runDemo(o: DemoOptions): Promise<void> {
  const files = await withProgress(o, 'simulating', async () => writeDemo(o.out, o.seed, o.force));
  if (!o.quiet) process.stdout.write(files.join('\n') + '\n');
}
