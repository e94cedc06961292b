/**
 * Data for the cube DM-refinement benchmark of `npm run bench` (bundled by tests/bench/run.mjs
 * with esbuild and run by plain node):
 *
 *   node cube-data.mjs OUT_DIR TRIALS SEED
 *
 * Writes, once, the cube and template both sides read:
 *   OUT_DIR/cube.npy           float64 little-endian, C order, shape [1024, 2048] (channel-major),
 *                              via shared/profiles/npy-write.ts;
 *   OUT_DIR/cube-template.npy  float64, shape [2048]: the noiseless template, peak at phase 0.5;
 *   OUT_DIR/cube-truth.json    { source, mjd, period_s, nbin, nchan, freqs_mhz, ref_freq_mhz,
 *                              dm_applied, dm_true, k, components, trials_dm, … }.
 *
 * One invented source, BENCH-1 (P = 2.3 ms), 1024 channels spread evenly over 1100–1900 MHz
 * (channel centres), 2048 bins. The channels are dedispersed with dm_applied = 38.4172 while the
 * pulses travelled through dm_true = dm_applied + 0.0042 pc cm⁻³, so the residual sweep across the
 * band is ≈ 0.0042 turns (0.99 turns per pc cm⁻³), more than the main component's σ of 0.003
 * turns: the S/N over trial DMs has a clear peak away from the applied DM. Pulses from shared/sim/cubes.ts simulateCube (two Gaussian components, no
 * scattering), white noise σ = 1 per bin (not written to the file: Sightline estimates each
 * channel's noise from its template match), seeded with shared/sim/random.ts createRng; the peak
 * height per channel is 2·(ν/1400 MHz)^−1.5 with a slow ±40 % ripple across the band, i.e. a
 * noise-free matched-filter S/N of 3.4–15 per channel (median 7), ≈ 265 over the whole band. The template is simulateTemplate of the same components.
 * The trial grid is shared/cubes/refine.ts trialDms over dm_applied ± 0.02 with TRIALS points.
 * K = 1/2.41e-4 s MHz² pc⁻¹ cm³ (Sightline's conventional constant).
 * Prints one JSON line: { write_s, bytes, nchan, nbin, trials }.
 */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { trialDms } from '../../shared/cubes/refine.js';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { writeNpy } from '../../shared/profiles/npy-write.js';
import { simulateCube, simulateTemplate } from '../../shared/sim/cubes.js';
import { createRng } from '../../shared/sim/random.js';

const [outDir, trialsText, seedText] = process.argv.slice(2);
const nTrials = Number(trialsText);
const seed = Number(seedText);
if (!outDir || !(Number.isInteger(nTrials) && nTrials > 1) || !Number.isInteger(seed)) {
  process.stderr.write('usage: node cube-data.mjs OUT_DIR TRIALS SEED\n');
  process.exit(2);
}

const t0 = process.hrtime.bigint();
const NCHAN = 1024;
const NBIN = 2048;
const F_LO = 1100;
const F_HI = 1900;
const PERIOD_S = 0.0023;
const DM_APPLIED = 38.4172;
const DM_TRUE = DM_APPLIED + 0.0042;
const HALF_RANGE = 0.02;
const REF_MHZ = 1400;
const K = dispersionConstant('conventional');
const components = [
  { weight: 1, offset: 0, width: 0.003 },
  { weight: 0.35, offset: 0.012, width: 0.006 },
];
const chanWidth = (F_HI - F_LO) / NCHAN;
const freqs = Array.from({ length: NCHAN }, (_, c) => F_LO + (c + 0.5) * chanWidth);
const amplitude = (f: number, c: number) =>
  2 * (f / REF_MHZ) ** -1.5 * (1 + 0.4 * Math.sin((2 * Math.PI * c) / 300));

const { set } = simulateCube(
  {
    source: 'BENCH-1',
    mjd: '60123.25',
    periodS: PERIOD_S,
    nbin: NBIN,
    freqsMhz: freqs,
    dmApplied: DM_APPLIED,
    dmTrue: DM_TRUE,
    refFreqMhz: REF_MHZ,
    k: K.value,
    phase: 0.37,
    components,
    amplitude,
    noise: 1,
  },
  createRng(seed),
);
const data = new Float64Array(NCHAN * NBIN);
set.bands.forEach((b, c) => data.set(b.bins, c * NBIN));
const template = simulateTemplate({ nbin: NBIN, components }, 0.5);

const step = (2 * HALF_RANGE) / (nTrials - 1);
const trials = trialDms({ lo: DM_APPLIED - HALF_RANGE, hi: DM_APPLIED + HALF_RANGE, step });
if (trials.length !== nTrials) {
  process.stderr.write(`the trial grid has ${trials.length} points, not ${nTrials}\n`);
  process.exit(1);
}

const cubeBytes = writeNpy(data, [NCHAN, NBIN], '<f8');
writeFileSync(join(outDir, 'cube.npy'), cubeBytes);
writeFileSync(join(outDir, 'cube-template.npy'), writeNpy(template, [NBIN], '<f8'));
writeFileSync(
  join(outDir, 'cube-truth.json'),
  JSON.stringify({
    source: set.source,
    mjd: set.mjd,
    seed,
    period_s: PERIOD_S,
    nchan: NCHAN,
    nbin: NBIN,
    freqs_mhz: freqs,
    ref_freq_mhz: REF_MHZ,
    dm_applied: DM_APPLIED,
    dm_true: DM_TRUE,
    k: K.value,
    k_name: K.name,
    noise: 1,
    components,
    template_phase: 0.5,
    trials_dm: Array.from(trials),
    trial_step: step,
  }),
);
process.stdout.write(
  JSON.stringify({
    write_s: Number(process.hrtime.bigint() - t0) / 1e9,
    bytes: cubeBytes.length,
    nchan: NCHAN,
    nbin: NBIN,
    trials: trials.length,
  }) + '\n',
);
