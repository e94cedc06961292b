import { describe, expect, it } from 'vitest';
import { RealFft } from '../../shared/dsp/fft.js';
import { dwt, idwt, waveletDenoise, waveletLevels } from '../../shared/dsp/wavelet.js';
import { harmonicsOf, resampleHarmonics, wrapPhase } from '../../shared/cubes/cube.js';
import { analyseCube, prepareTemplate } from '../../shared/cubes/context.js';
import { matchProfile, PeakFinder } from '../../shared/cubes/match.js';
import { buildTemplate, scrunchCube } from '../../shared/cubes/template.js';
import { trialDms } from '../../shared/cubes/refine.js';
import { cubeFromProfiles } from '../../shared/cubes/cube.js';
import { InputError } from '../../shared/formats/errors.js';
import { checkProfileSet } from '../../shared/profiles/input.js';
import type { ProfileSet } from '../../shared/profiles/types.js';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { simulateCube, simulateTemplate } from '../../shared/sim/cubes.js';
import { createRng } from '../../shared/sim/random.js';

const K = dispersionConstant('conventional');

/** Periodic sum of Gaussians (phase units), sampled at bin j ↦ phase j/n. */
function pulse(n: number, centre: number, comps = [{ w: 1, off: 0, sigma: 0.02 }]) {
  return Float64Array.from({ length: n }, (_, j) => {
    let v = 0;
    for (const c of comps)
      for (let m = -3; m <= 3; m++) {
        const d = (j / n - centre - c.off + m) / c.sigma;
        v += c.w * Math.exp(-0.5 * d * d);
      }
    return v;
  });
}

/** x delayed by `shift` turns through the Fourier domain (exact for band-limited signals). */
function fourierShift(x: Float64Array, shift: number): Float64Array {
  const n = x.length;
  const fft = new RealFft(n);
  const re = new Float64Array(fft.size);
  const im = new Float64Array(fft.size);
  fft.forward(x, re, im);
  for (let k = 1; k < fft.size; k++) {
    const a = -2 * Math.PI * k * shift;
    const [r, i] = [re[k], im[k]];
    re[k] = r * Math.cos(a) - i * Math.sin(a);
    im[k] = r * Math.sin(a) + i * Math.cos(a);
  }
  if (n % 2 === 0) im[n / 2] = 0;
  const out = new Float64Array(n);
  fft.inverse(re, im, out);
  return out;
}

function match(profile: Float64Array, template: Float64Array, s2?: number) {
  const p = harmonicsOf(profile, 1, profile.length);
  let t = harmonicsOf(template, 1, template.length);
  if (template.length !== profile.length) t = resampleHarmonics(t, profile.length);
  const finder = new PeakFinder(profile.length, p.h);
  return matchProfile(
    p.re,
    p.im,
    0,
    p.power[0],
    t.re,
    t.im,
    0,
    t.power[0],
    finder,
    new Float64Array(p.h),
    new Float64Array(p.h),
    s2,
  );
}

describe('Fourier template matching without noise (science.md: < 1e-6 of a period)', () => {
  // fractional-bin shifts, powers of two and other bin counts, one and two components
  const shifts = [0.0003, 0.123456789, -0.3141592, 0.4999];
  for (const n of [64, 100, 256, 1000, 1024]) {
    it(`recovers Fourier shifts of the template itself, ${n} bins`, () => {
      const t = pulse(n, 0.5, [
        { w: 1, off: 0, sigma: 0.015 },
        { w: 0.4, off: 0.05, sigma: 0.03 },
      ]);
      for (const s of shifts) {
        const m = match(
          fourierShift(t, s).map((v) => 2.5 * v),
          t,
        );
        expect(Math.abs(wrapPhase(m.phase - s))).toBeLessThan(1e-9);
        expect(m.amp).toBeCloseTo(2.5, 9);
      }
    });
    it(`recovers analytically shifted Gaussians, ${n} bins`, () => {
      const t = pulse(n, 0.5);
      for (const s of shifts) {
        const m = match(pulse(n, 0.5 + s), t);
        expect(Math.abs(wrapPhase(m.phase - s))).toBeLessThan(1e-6);
      }
    });
  }

  it('a delayed profile gives a positive phase (later arrival)', () => {
    const t = pulse(256, 0.3);
    expect(match(pulse(256, 0.3 + 2.37 / 256), t).phase).toBeCloseTo(2.37 / 256, 9);
  });

  it('finds the global maximum of a two-peaked cross-correlation', () => {
    const comps = [
      { w: 1, off: 0, sigma: 0.01 },
      { w: 0.8, off: 0.4, sigma: 0.01 },
    ];
    const t = pulse(512, 0.2, comps);
    const m = match(pulse(512, 0.2 + 0.0777, comps), t);
    expect(Math.abs(m.phase - 0.0777)).toBeLessThan(1e-9);
  });

  it('matches a template with another number of bins after Fourier resampling', () => {
    const t512 = pulse(512, 0.5, [{ w: 1, off: 0, sigma: 0.03 }]);
    for (const n of [256, 1024, 300]) {
      const m = match(pulse(n, 0.5 + 0.01234), t512);
      expect(Math.abs(m.phase - 0.01234)).toBeLessThan(1e-6);
    }
  });

  it('noise from the residuals: a perfect match has zero residual; given noise sets S/N', () => {
    const t = pulse(256, 0.5);
    const m = match(
      t.map((v) => 3 * v),
      t,
      (256 * 1) / 2,
    );
    // S/N = b·√Σ|T_k|²/s with s² = nσ²/2
    const th = harmonicsOf(t, 1, 256);
    expect(m.snr).toBeCloseTo((3 * Math.sqrt(th.power[0])) / Math.sqrt(128), 9);
    // χ² = (Σ|P|² − C²/Σ|T|²)/s²: zero up to rounding of the two large sums
    expect(m.chi2).toBeLessThan((1e-12 * 9 * th.power[0]) / 128);
  });
});

describe('wavelet transform and denoising', () => {
  it('the periodic Daubechies-4 transform is orthonormal and inverts exactly', () => {
    const rng = createRng(3);
    const x = Float64Array.from({ length: 256 }, () => rng.normal());
    const w = x.slice();
    const levels = waveletLevels(256);
    expect(levels).toBe(6);
    dwt(w, levels);
    const energy = (a: Float64Array) => a.reduce((s, v) => s + v * v, 0);
    expect(energy(w)).toBeCloseTo(energy(x), 9);
    idwt(w, levels);
    for (let i = 0; i < 256; i++) expect(w[i]).toBeCloseTo(x[i], 12);
  });

  it('denoising brings a noisy pulse closer to the truth', () => {
    const rng = createRng(4);
    const truth = pulse(512, 0.5, [{ w: 10, off: 0, sigma: 0.02 }]);
    const noisy = truth.map((v) => v + rng.normal());
    const clean = waveletDenoise(noisy, 1);
    const rms = (a: Float64Array) =>
      Math.sqrt(a.reduce((s, v, i) => s + (v - truth[i]) ** 2, 0) / a.length);
    expect(rms(clean)).toBeLessThan(0.5 * rms(noisy));
  });

  it('odd lengths are refused with a reason', () => {
    expect(() => waveletDenoise(new Float64Array(101), 1)).toThrow(/even length/);
  });
});

function cubeSet(
  seed: number,
  over: Partial<Parameters<typeof simulateCube>[0]> = {},
): ReturnType<typeof simulateCube> {
  return simulateCube(
    {
      source: 'SBP-B',
      mjd: '60300.5',
      periodS: 0.00405,
      nbin: 256,
      freqsMhz: Array.from({ length: 24 }, (_, i) => 1150 + (i + 0.5) * 25),
      dmApplied: 21.36,
      dmTrue: 21.36,
      refFreqMhz: null,
      k: K.value,
      phase: 0.3,
      components: [{ weight: 1, offset: 0, width: 0.012 }],
      amplitude: () => 4,
      noise: 1,
      ...over,
    },
    createRng(seed),
  );
}

describe('template building', () => {
  it('aligns and averages many visits into a template matching the truth, peak at phase ½', () => {
    const rng = createRng(11);
    const cubes = Array.from({ length: 30 }, (_, v) =>
      scrunchCube(
        cubeFromProfiles(
          cubeSet(100 + v, { phase: rng.uniform(), dmTrue: 21.36 + 2e-3 * rng.normal() }).set,
        ),
      ),
    );
    const truth = simulateTemplate(
      { nbin: 256, components: [{ weight: 1, offset: 0, width: 0.012 }] },
      0.5,
    );
    // correlation with the noiseless truth: smoothing must beat the plain average (whose
    // per-bin noise here is ~1% of the peak); the soft wavelet threshold also trims the peak a
    // little, hence its lower bar
    const floor = { fourier: 0.999, wavelet: 0.998, none: 0.995 };
    const corr: Record<string, number> = {};
    for (const smooth of ['fourier', 'wavelet', 'none'] as const) {
      const b = buildTemplate(cubes, { smooth });
      expect(b.fiducialPhase).toBe(0.5);
      // peak of 1 at bin 128 (phase ½)
      const peakBin = b.bins.indexOf(Math.max(...b.bins));
      expect(Math.abs(peakBin - 128)).toBeLessThanOrEqual(1);
      expect(Math.max(...b.bins)).toBeCloseTo(1, 12);
      const mean = (a: Float64Array) => a.reduce((s, v) => s + v, 0) / a.length;
      const [ma, mb] = [mean(b.bins), mean(truth)];
      let sab = 0;
      let saa = 0;
      let sbb = 0;
      for (let j = 0; j < 256; j++) {
        sab += (b.bins[j] - ma) * (truth[j] - mb);
        saa += (b.bins[j] - ma) ** 2;
        sbb += (truth[j] - mb) ** 2;
      }
      corr[smooth] = sab / Math.sqrt(saa * sbb);
      expect(corr[smooth]).toBeGreaterThan(floor[smooth]);
      expect(b.visits.every((v) => v.used)).toBe(true);
    }
    expect(corr.fourier).toBeGreaterThan(corr.none);
    expect(corr.wavelet).toBeGreaterThan(corr.none);
  });

  it('refuses cubes of two pulsars, naming the odd one', () => {
    const a = scrunchCube(cubeFromProfiles(cubeSet(1).set));
    const b = scrunchCube(cubeFromProfiles({ ...cubeSet(2).set, source: 'SBP-C' }));
    try {
      buildTemplate([a, b], { smooth: 'fourier' });
      expect.unreachable();
    } catch (e) {
      expect((e as { cubeIndex: number }).cubeIndex).toBe(1);
      expect((e as Error).message).toMatch(/SBP-C.*SBP-B/);
    }
  });
});

describe('cube input checks', () => {
  const base = (): ProfileSet => cubeSet(5).set;

  it('flagged channels (entirely NaN or constant) are counted, not refused', () => {
    const set = base();
    set.bands[3].bins.fill(NaN);
    set.bands[7].bins.fill(0);
    checkProfileSet(set, { allowFlagged: true });
    expect(set.flagged).toEqual([3, 7]);
    const cube = cubeFromProfiles(set);
    const ctx = analyseCube(
      cube,
      prepareTemplate({ ...set, bands: [{ freqMhz: 1400, bins: pulse(256, 0.5) }] }, cube),
    );
    expect(ctx.matches[3]).toBeNull();
    expect(ctx.matches[7]).toBeNull();
    expect(ctx.matches[4]?.ok).toBe(true);
  });

  it('a channel with some NaN bins is refused with channel and bin', () => {
    const set = base();
    set.bands[2].bins[17] = NaN;
    try {
      checkProfileSet(set, { allowFlagged: true });
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as InputError).location).toMatchObject({ row: 3, column: 'profiles[2].bins[17]' });
      expect((e as Error).message).toMatch(/entirely NaN or constant/);
    }
  });

  it('a cube with every channel flagged is refused', () => {
    const set = base();
    for (const b of set.bands) b.bins.fill(0);
    expect(() => checkProfileSet(set, { allowFlagged: true })).toThrow(/every channel is flagged/);
  });

  it('without allowFlagged a flat band is still refused (scattering fits)', () => {
    const set = base();
    set.bands[1].bins.fill(0);
    expect(() => checkProfileSet(set)).toThrow(/no signal/);
  });

  it('a template with neither one band nor one per channel is refused, naming its layout', () => {
    const set = base();
    const cube = cubeFromProfiles(set);
    const t: ProfileSet = {
      ...set,
      bands: [
        { freqMhz: 1200, bins: pulse(256, 0.5) },
        { freqMhz: 1300, bins: pulse(256, 0.5) },
      ],
    };
    expect(() => prepareTemplate(t, cube)).toThrow(/one band .* or one band per channel/);
  });

  it('a per-channel template must list the cube frequencies', () => {
    const set = base();
    const cube = cubeFromProfiles(set);
    const t: ProfileSet = {
      ...set,
      bands: set.bands.map((b, i) => ({
        freqMhz: i === 5 ? b.freqMhz + 1 : b.freqMhz,
        bins: pulse(256, 0.5),
      })),
    };
    expect(() => prepareTemplate(t, cube)).toThrow(/template band 6 is at/);
  });

  it('trial DM grids include both ends despite decimal steps', () => {
    const t = trialDms({ lo: 21.3, hi: 21.42, step: 0.001 });
    expect(t.length).toBe(121);
    expect(t[120]).toBeCloseTo(21.42, 12);
  });
});
