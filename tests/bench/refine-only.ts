/**
 * Sightline's side of the cube DM-refinement benchmark of `npm run bench` (bundled by
 * tests/bench/run.mjs with esbuild, the CLI's settings, and run by plain node):
 *
 *   node refine-only.mjs CUBE.npy TEMPLATE.npy TRUTH.json OUT.json
 *
 * Reads the cube and template with shared/profiles/npy.ts readNpy and the metadata from
 * TRUTH.json, and builds the Cube (no noise given: every channel's noise comes from its match) —
 * none of that is timed (load_s). Then, one pass each, in this order, no warm-up:
 *   fft_s      harmonicsOf(cube.data, nchan, nbin): harmonics 1 … H of every channel, on their own
 *              (the counterpart of NumPy's rfft stage; analyseCube repeats this work inside);
 *   analyse_s  prepareTemplate + analyseCube: harmonics of every channel and the template, and a
 *              template match per channel (Fourier-domain cross-correlation peak, amplitude, noise);
 *   shifter_s  matchedWeights, weightedCentreMhz, shiftPerDm(freqs, P, centre, K) and the
 *              DmShifter constructor (the weighted cross-spectra w_c·X_ck·T̄_k and the norm);
 *   trials_s   shifter.snrAt(dm − dmApplied) for every trial DM in TRUTH.json, in order: per trial
 *              the Fourier shift and sum over channels, the inverse FFT onto the bin grid and the
 *              Newton refinement of the maximum over phase (shared/cubes/refine.ts, match.ts).
 * Writes to OUT.json what the NumPy script needs to do the same sums (per channel: weights w_c —
 * 0 for channels Sightline leaves out —, s2_c and d_c in turns per pc cm⁻³; the template comes
 * from TEMPLATE.npy) and the S/N curve with the phase of each maximum. Prints one JSON line with
 * the timings and a summary.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { analyseCube, prepareTemplate } from '../../shared/cubes/context.js';
import { harmonicsOf, type Cube } from '../../shared/cubes/cube.js';
import {
  DmShifter,
  matchedWeights,
  shiftPerDm,
  weightedCentreMhz,
} from '../../shared/cubes/refine.js';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { readNpy } from '../../shared/profiles/npy.js';

const [cubePath, templatePath, truthPath, outPath] = process.argv.slice(2);
if (!cubePath || !templatePath || !truthPath || !outPath) {
  process.stderr.write('usage: node refine-only.mjs CUBE.npy TEMPLATE.npy TRUTH.json OUT.json\n');
  process.exit(2);
}

const seconds = (t0: bigint) => Number(process.hrtime.bigint() - t0) / 1e9;

interface Truth {
  source: string;
  mjd: string;
  period_s: number;
  nchan: number;
  nbin: number;
  freqs_mhz: number[];
  ref_freq_mhz: number;
  dm_applied: number;
  dm_true: number;
  k: number;
  trials_dm: number[];
}

const tLoad = process.hrtime.bigint();
const npy = readNpy(readFileSync(cubePath));
const tnpy = readNpy(readFileSync(templatePath));
const truth = JSON.parse(readFileSync(truthPath, 'utf8')) as Truth;
const [nchan, nbin] = npy.shape;
if (nchan !== truth.nchan || nbin !== truth.nbin || tnpy.data.length !== nbin) {
  process.stderr.write(
    `shapes disagree: cube ${npy.shape.join('×')}, template ${tnpy.shape.join('×')}, truth ${truth.nchan}×${truth.nbin}\n`,
  );
  process.exit(2);
}
const cube: Cube = {
  source: truth.source,
  mjd: truth.mjd,
  periodS: truth.period_s,
  dmApplied: truth.dm_applied,
  refFreqMhz: truth.ref_freq_mhz,
  receiver: null,
  nchan,
  nbin,
  freqs: Float64Array.from(truth.freqs_mhz),
  data: npy.data,
  noise: new Float64Array(nchan).fill(NaN),
  flagged: new Uint8Array(nchan),
};
const k = dispersionConstant('conventional');
if (Math.abs(k.value - truth.k) > 1e-12 * k.value) {
  process.stderr.write(`K in the truth file (${truth.k}) is not Sightline's ${k.value}\n`);
  process.exit(2);
}
const trials = truth.trials_dm;
const loadS = seconds(tLoad);

let t = process.hrtime.bigint();
const x = harmonicsOf(cube.data, nchan, nbin);
const fftS = seconds(t);

t = process.hrtime.bigint();
const template = prepareTemplate(
  {
    source: truth.source,
    mjd: truth.mjd,
    periodS: truth.period_s,
    bands: [{ freqMhz: truth.ref_freq_mhz, bins: tnpy.data }],
  },
  cube,
);
const ctx = analyseCube(cube, template);
const analyseS = seconds(t);

t = process.hrtime.bigint();
const weights = matchedWeights(ctx);
const centre = weightedCentreMhz(ctx);
const d = shiftPerDm(cube.freqs, cube.periodS, centre, k);
const shifter = new DmShifter(ctx, weights, d);
const shifterS = seconds(t);

const snr = new Array<number>(trials.length);
const phase = new Array<number>(trials.length);
t = process.hrtime.bigint();
for (let j = 0; j < trials.length; j++) {
  const r = shifter.snrAt(trials[j] - cube.dmApplied);
  snr[j] = r.snr;
  phase[j] = r.phase;
}
const trialsS = seconds(t);

// the harmonics computed on their own must be the ones analyseCube uses (same code, same input)
let fftMismatch = 0;
for (let i = 0; i < x.re.length; i++) {
  fftMismatch = Math.max(
    fftMismatch,
    Math.abs(x.re[i] - ctx.x.re[i]),
    Math.abs(x.im[i] - ctx.x.im[i]),
  );
}

let best = 0;
for (let j = 1; j < snr.length; j++) if (snr[j] > snr[best]) best = j;

writeFileSync(
  outPath,
  JSON.stringify({
    weights: Array.from(weights),
    s2: Array.from(ctx.s2),
    d: Array.from(d),
    centre_mhz: centre,
    norm: shifter.norm,
    snr,
    phase,
  }),
);
process.stdout.write(
  JSON.stringify({
    load_s: loadS,
    fft_s: fftS,
    analyse_s: analyseS,
    shifter_s: shifterS,
    trials_s: trialsS,
    n_trials: trials.length,
    nchan,
    nbin,
    h: shifter.h,
    used_channels: shifter.used.length,
    centre_mhz: centre,
    best_trial: best,
    best_dm: trials[best],
    best_snr: snr[best],
    fft_repeat_max_abs_diff: fftMismatch,
  }) + '\n',
);
