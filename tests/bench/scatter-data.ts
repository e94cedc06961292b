/**
 * Data for the scattering benchmark of `npm run bench` (bundled by tests/bench/run.mjs with
 * esbuild and run by plain node):
 *
 *   node scatter-data.mjs OUT_DIR VISITS SEED
 *
 * Writes, once, the profiles both sides fit:
 *   OUT_DIR/profiles.npy   float64 little-endian, shape [VISITS·64, 1024] (visit-major, band
 *                          minor), via shared/profiles/npy-write.ts;
 *   OUT_DIR/truth.json     { nbin, bands, visits, seed, alpha, freqs_mhz, noise: [per profile],
 *                          tau_bins: [per profile], … } — the true values and the per-bin noise σ
 *                          both fitters are given.
 *
 * The profiles come from shared/sim/profiles.ts simulateProfiles (one scattered Gaussian, the
 * periodic EMG, plus white noise of known σ), seeded with shared/sim/random.ts createRng. Per
 * visit: τ at 550 MHz log-uniform in 0.01–0.3 of the period, τ ∝ ν^−4.4 over 64 bands spaced
 * evenly from 550 to 3400 MHz (so the top bands are far below a bin: unconstrained), intrinsic
 * width σ uniform in 0.01–0.02 of the period, pulse phase uniform in 0.25–0.45, baseline uniform
 * in ±0.5, per-bin noise uniform in 0.5–2. Per band: the area is set so that the noise-free peak
 * above the baseline is S/N uniform in 20–100 times the noise.
 * Prints one JSON line: { write_s, n_profiles, bytes }.
 */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { gaussModel } from '../../shared/profiles/models.js';
import { writeNpy } from '../../shared/profiles/npy-write.js';
import { simulateProfiles } from '../../shared/sim/profiles.js';
import { createRng } from '../../shared/sim/random.js';

const [outDir, visitsText, seedText] = process.argv.slice(2);
const visits = Number(visitsText);
const seed = Number(seedText);
if (!outDir || !(Number.isInteger(visits) && visits > 0) || !Number.isInteger(seed)) {
  process.stderr.write('usage: node scatter-data.mjs OUT_DIR VISITS SEED\n');
  process.exit(2);
}

const t0 = process.hrtime.bigint();
const NBIN = 1024;
const BANDS = 64;
const ALPHA = 4.4;
const F_LO = 550;
const F_HI = 3400;
const freqs = Array.from({ length: BANDS }, (_, i) => F_LO + ((F_HI - F_LO) * i) / (BANDS - 1));

const rng = createRng(seed);
const data = new Float64Array(visits * BANDS * NBIN);
const unit = gaussModel(1, NBIN);
const shape = new Float64Array(NBIN);
const truth = {
  nbin: NBIN,
  bands: BANDS,
  visits,
  seed,
  alpha: ALPHA,
  freqs_mhz: freqs,
  // per visit
  tau_550_periods: [] as number[],
  width_periods: [] as number[],
  phase: [] as number[],
  baseline: [] as number[],
  // per profile (visit-major)
  noise: [] as number[],
  tau_bins: [] as number[],
  area: [] as number[],
  snr: [] as number[],
};

for (let v = 0; v < visits; v++) {
  const tau550 = 0.01 * 30 ** rng.uniform(); // log-uniform in 0.01–0.3 periods
  const width = 0.01 + 0.01 * rng.uniform();
  const phase = 0.25 + 0.2 * rng.uniform();
  const baseline = rng.uniform() - 0.5;
  const noise = 0.5 + 1.5 * rng.uniform();
  const tau1Ghz = tau550 * (F_LO / 1000) ** ALPHA;
  truth.tau_550_periods.push(tau550);
  truth.width_periods.push(width);
  truth.phase.push(phase);
  truth.baseline.push(baseline);
  for (let b = 0; b < BANDS; b++) {
    const f = freqs[b];
    // the noise-free peak of a unit-area pulse at this band's τ (as simulateProfiles computes τ)
    const tauBins = Math.max(1e-3, tau1Ghz * NBIN * (f / 1000) ** -ALPHA);
    unit.evaluate([0, tauBins, 1, phase * NBIN, width * NBIN], shape);
    let peak = 0;
    for (let i = 0; i < NBIN; i++) peak = Math.max(peak, shape[i]);
    const snr = 20 + 80 * rng.uniform();
    const area = (snr * noise) / peak;
    const [p] = simulateProfiles(
      {
        nbin: NBIN,
        freqsMhz: [f],
        tau1GhzPeriods: tau1Ghz,
        alpha: ALPHA,
        components: [{ area, phase, width }],
        noise,
        baseline,
      },
      rng,
    );
    data.set(p.bins, (v * BANDS + b) * NBIN);
    truth.noise.push(noise);
    truth.tau_bins.push(p.tauBins);
    truth.area.push(area);
    truth.snr.push(snr);
  }
}

const bytes = writeNpy(data, [visits * BANDS, NBIN], '<f8');
writeFileSync(join(outDir, 'profiles.npy'), bytes);
writeFileSync(join(outDir, 'truth.json'), JSON.stringify(truth));
process.stdout.write(
  JSON.stringify({
    write_s: Number(process.hrtime.bigint() - t0) / 1e9,
    n_profiles: visits * BANDS,
    bytes: bytes.length,
  }) + '\n',
);
