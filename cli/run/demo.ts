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
import { simulateDemo } from '../../shared/sim/demo.js';
import { writeNpy } from '../../shared/profiles/npy-write.js';
import { DEMO_GROUP, DEMO_OBSERVATORY, RECEIVERS } from '../../shared/sim/scenario.js';
import { SOFTWARE, withProgress, type CommonOptions } from '../common.js';
import { usageError } from '../errors.js';

export interface DemoOptions extends CommonOptions {
  out: string;
  seed: number;
  force?: boolean;
}

/**
 * Write the fictional demo data set (demo-scenario handout) from the seeded simulator: the
 * catalogue, one residual table per pulsar and the injected truth. Written into a temporary
 * folder and renamed into place, so a failure leaves nothing half-made.
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
