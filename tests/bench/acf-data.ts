/**
 * Data for the dynamic-spectrum ACF benchmark of `npm run bench` (bundled by tests/bench/run.mjs
 * with esbuild and run by plain node):
 *
 *   node acf-data.mjs OUT_DIR SEED
 *
 * Writes, once, the dynamic spectrum both sides read:
 *   OUT_DIR/acf-dynspec.npy   float64 little-endian, C order, shape [1024, 4096] (one row per
 *                             channel, ascending frequency), via shared/profiles/npy-write.ts;
 *                             flagged pixels are NaN (the way a producer marks missing pixels;
 *                             dynspecFromArray turns them into its inputMask, NumPy into
 *                             np.isnan);
 *   OUT_DIR/acf-truth.json    { source, nchan, nsub, f0_mhz, df_mhz, dt_s, dnu_d_mhz, dt_d_s,
 *                             flagged_fraction, flagged_channels, blocks, … }.
 *
 * The spectrum: shared/sim/scint.ts simulateDynspec run directly at 1024 × 4096 (its filtering
 * FFT is one 2-D transform of the 2048 × 8192 padded grid, about 5 s here, so no cheaper
 * generator is needed): 1024 channels of 0.5 MHz from 1100 MHz, 4096 sub-integrations of 2 s,
 * Δν_d = 2 MHz (4 channels), Δt_d = 60 s (30 sub-integrations), flux 1, white noise σ = 0.3,
 * seeded with shared/sim/random.ts createRng. The mask (≈ 5 % of the pixels): 12 whole channels, then
 * rectangular blocks (2–16 channels × 8–128 sub-integrations at random places) until 5 % of the
 * pixels are flagged. Source BENCH-1 (invented).
 * Prints one JSON line: { write_s, bytes, nchan, nsub, flagged_fraction }.
 */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { writeNpy } from '../../shared/profiles/npy-write.js';
import { createRng } from '../../shared/sim/random.js';
import { simulateDynspec } from '../../shared/sim/scint.js';

const [outDir, seedText] = process.argv.slice(2);
const seed = Number(seedText);
if (!outDir || !Number.isInteger(seed)) {
  process.stderr.write('usage: node acf-data.mjs OUT_DIR SEED\n');
  process.exit(2);
}

const t0 = process.hrtime.bigint();
const NCHAN = 1024;
const NSUB = 4096;
const F0_MHZ = 1100;
const DF_MHZ = 0.5;
const DT_S = 2;
const DNU_D_MHZ = 2;
const DT_D_S = 60;
const FLAG_TARGET = 0.05;
const rng = createRng(seed);
const data = simulateDynspec(
  {
    nchan: NCHAN,
    nsub: NSUB,
    f0Mhz: F0_MHZ,
    dfMhz: DF_MHZ,
    dtS: DT_S,
    dnuDMhz: DNU_D_MHZ,
    dtDS: DT_D_S,
    flux: 1,
    noise: 0.3,
  },
  rng,
);
const simS = Number(process.hrtime.bigint() - t0) / 1e9;

const mask = new Uint8Array(NCHAN * NSUB);
let flagged = 0;
const flag = (c: number, t: number) => {
  const i = c * NSUB + t;
  if (!mask[i]) {
    mask[i] = 1;
    flagged++;
  }
};
const channels: number[] = [];
while (channels.length < 12) {
  const c = rng.int(NCHAN);
  if (channels.includes(c)) continue;
  channels.push(c);
  for (let t = 0; t < NSUB; t++) flag(c, t);
}
channels.sort((a, b) => a - b);
const blocks: Array<{ chan0: number; chan1: number; sub0: number; sub1: number }> = [];
while (flagged < FLAG_TARGET * NCHAN * NSUB) {
  const h = 2 + rng.int(15);
  const w = 8 + rng.int(121);
  const chan0 = rng.int(NCHAN - h + 1);
  const sub0 = rng.int(NSUB - w + 1);
  blocks.push({ chan0, chan1: chan0 + h - 1, sub0, sub1: sub0 + w - 1 });
  for (let c = chan0; c < chan0 + h; c++) for (let t = sub0; t < sub0 + w; t++) flag(c, t);
}
for (let i = 0; i < mask.length; i++) if (mask[i]) data[i] = NaN;

const bytes = writeNpy(data, [NCHAN, NSUB], '<f8');
writeFileSync(join(outDir, 'acf-dynspec.npy'), bytes);
writeFileSync(
  join(outDir, 'acf-truth.json'),
  JSON.stringify({
    source: 'BENCH-1',
    seed,
    nchan: NCHAN,
    nsub: NSUB,
    f0_mhz: F0_MHZ,
    df_mhz: DF_MHZ,
    dt_s: DT_S,
    dnu_d_mhz: DNU_D_MHZ,
    dt_d_s: DT_D_S,
    flux: 1,
    noise: 0.3,
    flagged_pixels: flagged,
    flagged_fraction: flagged / (NCHAN * NSUB),
    flagged_channels: channels,
    n_blocks: blocks.length,
    blocks,
  }),
);
process.stdout.write(
  JSON.stringify({
    write_s: Number(process.hrtime.bigint() - t0) / 1e9,
    simulate_s: simS,
    bytes: bytes.length,
    nchan: NCHAN,
    nsub: NSUB,
    flagged_fraction: flagged / (NCHAN * NSUB),
  }) + '\n',
);
