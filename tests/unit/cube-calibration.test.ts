import { describe, expect, it } from 'vitest';
import { analyseCube, prepareTemplate } from '../../shared/cubes/context.js';
import { cubeFromProfiles, harmonicsOf, wrapPhase } from '../../shared/cubes/cube.js';
import { jointFit } from '../../shared/cubes/joint.js';
import { matchProfile, PeakFinder } from '../../shared/cubes/match.js';
import {
  DmShifter,
  matchedWeights,
  refineDm,
  shiftPerDm,
  weightedCentreMhz,
} from '../../shared/cubes/refine.js';
import { channelToas } from '../../shared/cubes/toas.js';
import { fitDmVisits } from '../../shared/fit/dm-fit.js';
import { ToaTable } from '../../shared/formats/toa-table.js';
import { checkHeader } from '../../shared/formats/toas.js';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { simulateCube, simulateTemplate } from '../../shared/sim/cubes.js';
import { createRng } from '../../shared/sim/random.js';
import { diffSeconds, parseMjd } from '../../shared/time/mjd.js';

/** science.md "Calibration of uncertainties": fraction within 1σ in 0.683 ± 3·√(0.683·0.317/N). */
function expectCalibrated(hits: number, n: number) {
  const band = 3 * Math.sqrt((0.683 * 0.317) / n);
  expect(hits / n).toBeGreaterThan(0.683 - band);
  expect(hits / n).toBeLessThan(0.683 + band);
}

const K = dispersionConstant('conventional');

describe('injection–recovery: template-matching phase errors are calibrated', () => {
  // one profile per injection: random bins, shape, fractional shift and S/N (10 – 200)
  for (const noise of ['estimated from the residuals', 'given per bin'] as const) {
    it(`400 seeded profiles, noise ${noise}`, () => {
      const rng = createRng(noise === 'given per bin' ? 77 : 78);
      const n = 400;
      let hits = 0;
      for (let i = 0; i < n; i++) {
        const nbin = [128, 200, 256][rng.int(3)];
        const comps = [{ weight: 1, offset: 0, width: 0.01 + 0.03 * rng.uniform() }];
        if (rng.uniform() < 0.5)
          comps.push({ weight: 0.5 * rng.uniform(), offset: 0.06, width: 0.02 });
        const template = simulateTemplate({ nbin, components: comps }, 0.5);
        const shift = rng.uniform() - 0.5;
        const truth = simulateTemplate({ nbin, components: comps }, 0.5 + shift);
        const th = harmonicsOf(template, 1, nbin);
        // amplitude for a matched-filter S/N between 10 and 200 at σ = 1
        const snr = 10 * 20 ** rng.uniform();
        const amp = snr / Math.sqrt((2 * th.power[0]) / nbin);
        const profile = truth.map((v) => amp * v + rng.normal());
        const ph = harmonicsOf(profile, 1, nbin);
        const m = matchProfile(
          ph.re,
          ph.im,
          0,
          ph.power[0],
          th.re,
          th.im,
          0,
          th.power[0],
          new PeakFinder(nbin, th.h),
          new Float64Array(th.h),
          new Float64Array(th.h),
          noise === 'given per bin' ? nbin / 2 : undefined,
        );
        if (Math.abs(wrapPhase(m.phase - shift)) <= m.phaseErr) hits++;
      }
      expectCalibrated(hits, n);
    });
  }
});

describe('injection–recovery: cube DMs are calibrated', () => {
  // 300 seeded cubes, 24 channels across 1150–1750 MHz, 256 bins, dedispersed at 21.36 while
  // the pulses travelled through 21.36 + ΔDM; the noiseless template is given
  const n = 300;
  const nbin = 256;
  const comps = [
    { weight: 1, offset: 0, width: 0.012 },
    { weight: 0.3, offset: 0.04, width: 0.02 },
  ];
  const template = simulateTemplate({ nbin, components: comps }, 0.5);
  const rng = createRng(20261202);
  const cases = Array.from({ length: n }, (_, i) => {
    const dmTrue = 21.36 + 3e-3 * rng.normal();
    const phase = rng.uniform();
    const sim = simulateCube(
      {
        source: 'SBP-B',
        mjd: `${60300 + i}.25`,
        periodS: 0.00405,
        nbin,
        freqsMhz: Array.from({ length: 24 }, (_, c) => 1150 + (c + 0.5) * 25),
        dmApplied: 21.36,
        dmTrue,
        refFreqMhz: null,
        k: K.value,
        phase,
        components: comps,
        // a steep spectrum and channel-to-channel gains, per-channel S/N ≈ 5 – 60
        amplitude: (f) => (2 + 4 * rng.uniform()) * (f / 1400) ** -1.6,
        noise: 1,
        flagged: rng.uniform() < 0.2 ? [rng.int(24)] : [],
      },
      rng,
    );
    const cube = cubeFromProfiles(sim.set);
    const ctx = analyseCube(
      cube,
      prepareTemplate(
        {
          source: 'SBP-B',
          mjd: '60000',
          periodS: 0.00405,
          fiducialPhase: 0.5,
          bands: [{ freqMhz: 1400, bins: template }],
        },
        cube,
      ),
    );
    return { ctx, cube, dmTrue, phase };
  });

  it(`S/N over trial DMs (${n} cubes): refined DM within its error 68% of the time`, () => {
    let hits = 0;
    for (const { ctx, cube, dmTrue } of cases) {
      const shifter = new DmShifter(
        ctx,
        matchedWeights(ctx),
        shiftPerDm(cube.freqs, cube.periodS, weightedCentreMhz(ctx), K),
      );
      const r = refineDm(shifter, cube.dmApplied, { lo: 21.33, hi: 21.39, step: 0.001 });
      expect(r.atEdge).toBe(false);
      if (Math.abs(r.best.dm - dmTrue) <= r.best.dm_err!) hits++;
    }
    expectCalibrated(hits, n);
  });

  it(`DM from the channel arrival times (${n} cubes)`, () => {
    let hits = 0;
    for (const { ctx, cube, dmTrue } of cases) {
      const toas = channelToas(ctx, K, 8);
      const t = new ToaTable(checkHeader(['source', 'mjd', 'freq_mhz', 'err_us', 'pulse']));
      toas.toas.forEach((x, i) =>
        t.push({
          row: i + 1,
          source: cube.source,
          mjdText: x.mjd,
          epoch: x.epoch,
          freqMhz: x.freqMhz,
          errUs: x.errUs,
          pulse: 0,
        }),
      );
      const [v] = fitDmVisits(t, {
        constant: K,
        grouping: { kind: 'gap', gapDays: 1 },
        evolution: 0,
      });
      if (Math.abs(v.dm! - dmTrue) <= v.dm_err!) hits++;
    }
    expectCalibrated(hits, n);
  });

  it(`joint phase + DM fit (${n} cubes): DM and arrival time both calibrated`, () => {
    let dmHits = 0;
    let toaHits = 0;
    for (const { ctx, cube, dmTrue, phase } of cases) {
      const j = jointFit(ctx, K, 8);
      expect(j.status).toBe('fitted');
      if (Math.abs(j.dm! - dmTrue) <= j.dmErr!) dmHits++;
      // the true arrival of the pulse peak at the reported frequency: the epoch, the phase at
      // infinite frequency, and the full dispersion delay at the true DM
      const trueOffsetS = cube.periodS * phase + (K.value * dmTrue) / j.freqMhz ** 2;
      const offsetS = diffSeconds(parseMjd(j.toaMjd!), parseMjd(cube.mjd));
      const diffUs = wrapPhase((offsetS - trueOffsetS) / cube.periodS) * cube.periodS * 1e6;
      if (Math.abs(diffUs) <= j.errUs!) toaHits++;
      expect(Math.abs(j.phaseDmCorr!)).toBeLessThan(1);
    }
    expectCalibrated(dmHits, n);
    expectCalibrated(toaHits, n);
  });
});
