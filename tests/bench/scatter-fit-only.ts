/**
 * Sightline's side of the scattering benchmark of `npm run bench` (bundled by
 * tests/bench/run.mjs with esbuild, the CLI's settings, and run by plain node):
 *
 *   node scatter-fit-only.mjs PROFILES.npy TRUTH.json OUT.json
 *
 * Reads the profiles with shared/profiles/npy.ts readNpy (not timed) and the per-profile noise σ
 * from TRUTH.json, then fits every profile with
 *   fitProfileBand(bins, { model: 'gauss', noise })
 * in one pass, in file order, with no warm-up (the JIT's warm-up is part of the cost, as in a CLI
 * run). That is everything the CLI's per-band fit does: starting values, up to three LM starts,
 * and for a τ that is not constrained the profile-likelihood upper limit (which refits with τ held
 * at increasing values). Each fit is timed on its own too, so the time can be split by outcome.
 * Writes per-profile results to OUT.json and prints one JSON line with the totals.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { readNpy } from '../../shared/profiles/npy.js';
import { fitProfileBand } from '../../shared/profiles/scatter-fit.js';

const [npyPath, truthPath, outPath] = process.argv.slice(2);
if (!npyPath || !truthPath || !outPath) {
  process.stderr.write('usage: node scatter-fit-only.mjs PROFILES.npy TRUTH.json OUT.json\n');
  process.exit(2);
}

const seconds = (t0: bigint) => Number(process.hrtime.bigint() - t0) / 1e9;

const t0 = process.hrtime.bigint();
const cube = readNpy(readFileSync(npyPath));
const truth = JSON.parse(readFileSync(truthPath, 'utf8')) as { noise: number[] };
const loadS = seconds(t0);
const [count, nbin] = cube.shape;
if (truth.noise.length !== count) {
  process.stderr.write(`truth has ${truth.noise.length} profiles, the .npy ${count}\n`);
  process.exit(2);
}

const tau = new Array<number>(count);
const tauErr = new Array<number>(count);
const tauUpper = new Array<number | null>(count);
const chi2 = new Array<number>(count);
const iterations = new Array<number>(count);
const status = new Array<string>(count);
const fitS = new Array<number>(count);
const params = new Array<number[]>(count);

const tAll = process.hrtime.bigint();
for (let k = 0; k < count; k++) {
  const t = process.hrtime.bigint();
  const fit = fitProfileBand(cube.data.subarray(k * nbin, (k + 1) * nbin), {
    model: 'gauss',
    noise: truth.noise[k],
  });
  fitS[k] = seconds(t);
  tau[k] = fit.tauBins;
  tauErr[k] = fit.tauErrBins;
  tauUpper[k] = fit.tauUpperBins ?? null;
  chi2[k] = fit.chi2;
  iterations[k] = fit.iterations;
  status[k] = fit.status;
  params[k] = fit.params;
}
const totalS = seconds(tAll);

const byStatus: Record<string, { n: number; s: number }> = {};
for (let k = 0; k < count; k++) {
  const b = (byStatus[status[k]] ??= { n: 0, s: 0 });
  b.n++;
  b.s += fitS[k];
}

writeFileSync(
  outPath,
  JSON.stringify({
    names: ['baseline', 'tau', 'area_1', 'center_1', 'width_1'],
    tau_bins: tau,
    tau_err_bins: tauErr,
    tau_upper_bins: tauUpper,
    chi2,
    iterations,
    status,
    fit_s: fitS,
    params,
  }),
);
process.stdout.write(
  JSON.stringify({
    total_s: totalS,
    load_s: loadS,
    n_profiles: count,
    nbin,
    by_status: byStatus,
  }) + '\n',
);
