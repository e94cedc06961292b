/**
 * Sightline's side of the dynamic-spectrum ACF benchmark of `npm run bench` (bundled by
 * tests/bench/run.mjs with esbuild, the CLI's settings, and run by plain node):
 *
 *   node acf-only.mjs DYNSPEC.npy TRUTH.json OUT.npy [--repeat N]
 *
 * Reads the spectrum with shared/profiles/npy.ts readNpy and turns it into a DynSpec with
 * shared/scint/dynspec.ts dynspecFromArray (NaN pixels become its inputMask) — none of that is
 * timed (load_s). Then, best of --repeat (default 3) passes, no warm-up outside them:
 *   acf_s  maskedAcf(ds, ds.inputMask) (shared/scint/acf.ts): the mean over unflagged pixels,
 *          ΔI and W, both autocorrelations by one complex 2-D FFT of ΔI + i·W zero-padded to
 *          powers of two ≥ twice each size, the separation of the two spectra into
 *          |ΔĨ|² + i|W̃|², one inverse 2-D FFT, the crop to lags ±(n − 1) and the division by
 *          the rounded pair counts (NaN below 5 % of the zero-lag pairs) — the whole call.
 * Memory: process.resourceUsage().maxRSS (getrusage's peak resident set, the measure NumPy's
 * side reads with resource.getrusage) after loading and after the first pass; the process's
 * peak, so it includes the loaded spectrum.
 * Writes the ACF of the last pass to OUT.npy (float64, shape [2·nchan − 1, 2·nsub − 1], zero lag
 * at [nchan − 1, nsub − 1], NaN where too few pairs; not timed) and prints one JSON line with the
 * timings and a summary.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { writeNpy } from '../../shared/profiles/npy-write.js';
import { readNpy } from '../../shared/profiles/npy.js';
import { maskedAcf, type Acf } from '../../shared/scint/acf.js';
import { dynspecFromArray } from '../../shared/scint/dynspec.js';

const args = process.argv.slice(2);
let repeat = 3;
const r = args.indexOf('--repeat');
if (r >= 0) {
  repeat = Number(args[r + 1]);
  args.splice(r, 2);
}
const [dynspecPath, truthPath, outPath] = args;
if (!dynspecPath || !truthPath || !outPath || !(Number.isInteger(repeat) && repeat >= 1)) {
  process.stderr.write('usage: node acf-only.mjs DYNSPEC.npy TRUTH.json OUT.npy [--repeat N]\n');
  process.exit(2);
}

const seconds = (t0: bigint) => Number(process.hrtime.bigint() - t0) / 1e9;
const maxRssMb = () => (process.resourceUsage().maxRSS * 1024) / 1e6; // maxRSS is in KiB

interface Truth {
  source: string;
  nchan: number;
  nsub: number;
  f0_mhz: number;
  df_mhz: number;
  dt_s: number;
}

const tLoad = process.hrtime.bigint();
const truth = JSON.parse(readFileSync(truthPath, 'utf8')) as Truth;
const npy = readNpy(readFileSync(dynspecPath));
const [nchan, nsub] = npy.shape;
if (npy.shape.length !== 2 || nchan !== truth.nchan || nsub !== truth.nsub) {
  process.stderr.write(
    `shapes disagree: spectrum ${npy.shape.join('×')}, truth ${truth.nchan}×${truth.nsub}\n`,
  );
  process.exit(2);
}
const ds = dynspecFromArray(npy.data, nchan, nsub, {
  source: truth.source,
  freqs_mhz: { start: truth.f0_mhz, step: truth.df_mhz },
  times_s: { start: 0, step: truth.dt_s },
});
let flagged = 0;
for (let i = 0; i < ds.inputMask.length; i++) flagged += ds.inputMask[i];
const loadS = seconds(tLoad);
const rssLoadedMb = maxRssMb();

const runs: number[] = [];
let result: Acf | null = null;
let rssFirstPassMb = 0;
for (let k = 0; k < repeat; k++) {
  // only the last pass's ACF is kept: earlier ones are garbage before the next pass allocates
  const t = process.hrtime.bigint();
  const acf = maskedAcf(ds, ds.inputMask);
  runs.push(seconds(t));
  if (k === 0) rssFirstPassMb = maxRssMb();
  if (k === repeat - 1) result = acf;
}
if (!result) throw new Error('no pass ran');
const zeroLag = result.values[(nchan - 1) * result.lagSubs + nsub - 1];
let nan = 0;
for (let i = 0; i < result.values.length; i++) if (Number.isNaN(result.values[i])) nan++;

const tWrite = process.hrtime.bigint();
writeFileSync(outPath, writeNpy(result.values, [result.lagChans, result.lagSubs], '<f8'));
const writeS = seconds(tWrite);

process.stdout.write(
  JSON.stringify({
    load_s: loadS,
    acf_s: Math.min(...runs),
    acf_runs_s: runs,
    write_s: writeS,
    nchan,
    nsub,
    lag_chans: result.lagChans,
    lag_subs: result.lagSubs,
    flagged_pixels: flagged,
    zero_lag: zeroLag,
    nan_lags: nan,
    max_rss_loaded_mb: rssLoadedMb,
    max_rss_first_pass_mb: rssFirstPassMb,
    max_rss_mb: maxRssMb(),
  }) + '\n',
);
