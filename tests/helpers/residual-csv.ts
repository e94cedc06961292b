// A small arrival-time residual table of one invented pulsar as CSV bytes, for uploads in API
// tests: `visits` visits 10 days apart, eight frequencies each, a slowly wandering DM.
import { stringify } from 'csv-stringify/sync';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { createRng } from '../../shared/sim/random.js';
import { simulateResidualVisit, type SimToa } from '../../shared/sim/visits.js';

export function residualCsv(source = 'SBP-D', seed = 902, visits = 8): Buffer {
  const k = dispersionConstant('conventional');
  const rng = createRng(seed);
  const toas: SimToa[] = [];
  for (let v = 0; v < visits; v++)
    toas.push(
      ...simulateResidualVisit(
        k,
        {
          source,
          startMjd: 60510.2 + 10 * v,
          ddm: 2e-4 * Math.cos(v / 2),
          freqsMhz: [700, 800, 950, 1100, 1300, 1500, 1800, 2400],
          errUs: [0.9, 0.8, 0.7, 0.6, 0.5, 0.5, 0.6, 0.8],
          offsetUs: -0.4,
        },
        rng,
      ),
    );
  return Buffer.from(stringify(toas, { header: true }));
}
