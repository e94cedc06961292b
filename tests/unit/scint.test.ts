import { describe, expect, it } from 'vitest';
import { autocorrelate2 } from '../../shared/dsp/fft2.js';
import { InputError } from '../../shared/formats/errors.js';
import { fitCut, maskedAcf, type Acf } from '../../shared/scint/acf.js';
import { analyseDynspec, tauFromBandwidthUs } from '../../shared/scint/analyse.js';
import { dynspecFromArray, dynspecFromRows, type DynSpec } from '../../shared/scint/dynspec.js';
import { flagRfi } from '../../shared/scint/rfi.js';
import { createRng, type Rng } from '../../shared/sim/random.js';
import {
  simulateDynspec,
  simulateScreenDynspec,
  type ScintSimSpec,
} from '../../shared/sim/scint.js';

/** science.md "Calibration of uncertainties": fraction within 1σ in 0.683 ± 3·√(0.683·0.317/N). */
function expectCalibrated(hits: number, n: number) {
  const band = 3 * Math.sqrt((0.683 * 0.317) / n);
  expect(hits / n).toBeGreaterThan(0.683 - band);
  expect(hits / n).toBeLessThan(0.683 + band);
}

const AXES = { freqs_mhz: { start: 1200, step: 0.5 }, times_s: { start: 0, step: 10 } };

function spectrum(spec: ScintSimSpec, rng: Rng): DynSpec {
  return dynspecFromArray(simulateDynspec(spec, rng), spec.nchan, spec.nsub, {
    source: 'SBP-E',
    mjd: '60860.25',
    receiver: 'mid',
    freqs_mhz: { start: spec.f0Mhz, step: spec.dfMhz },
    times_s: { start: 0, step: spec.dtS },
  });
}

const base = (over: Partial<ScintSimSpec> = {}): ScintSimSpec => ({
  nchan: 128,
  nsub: 96,
  f0Mhz: 1200,
  dfMhz: 0.5,
  dtS: 10,
  dnuDMhz: 2,
  dtDS: 80,
  flux: 1,
  noise: 0.3,
  ...over,
});

const OPTS = { fence: 1.5, pixelSigma: 5, c1: 1.16 };

describe('τ from the decorrelation bandwidth (science.md check value)', () => {
  it('Δν_d = 1 MHz, C₁ = 1.16 → τ_d = 184.62 ns', () => {
    expect(tauFromBandwidthUs(1, 1.16) * 1e3).toBeCloseTo(184.62, 2);
  });
});

describe('injection–recovery: Δν_d and Δt_d are calibrated (200 seeded spectra)', () => {
  // scintles of known widths: a complex Gaussian field whose intensity ACF is exactly the
  // fitted shapes (shared/sim/scint.ts); Δν_d 2–8 channels, Δt_d 4–12 sub-integrations, noise
  // per pixel 0.3 or 1 of the mean flux. These seeds and ranges differ from those the time
  // width's finite-scintle factor was measured on (shared/scint/analyse.ts).
  it('the 1σ coverage of both widths lies in the band', () => {
    const rng = createRng(11);
    const n = 200;
    let hitNu = 0;
    let hitT = 0;
    for (let i = 0; i < n; i++) {
      const spec = base({
        dnuDMhz: 1 + 3 * rng.uniform(),
        dtDS: 40 + 80 * rng.uniform(),
        noise: rng.uniform() < 0.5 ? 0.3 : 1,
      });
      const r = analyseDynspec(spectrum(spec, rng), OPTS);
      expect(r.status).toBe('measured');
      if (Math.abs(r.dnuD! - spec.dnuDMhz) <= r.dnuDErr!) hitNu++;
      if (Math.abs(r.dtD! - spec.dtDS) <= r.dtDErr!) hitT++;
    }
    expectCalibrated(hitNu, n);
    expectCalibrated(hitT, n);
  });
});

/** The ACF with flagged pixels zero-filled and divided by one pair count for every lag. */
function naiveAcf(ds: DynSpec, mask: Uint8Array): Acf {
  let sum = 0;
  let n = 0;
  for (let i = 0; i < ds.data.length; i++)
    if (!mask[i]) {
      sum += ds.data[i];
      n++;
    }
  const x = ds.data.map((v, i) => (mask[i] ? 0 : v - sum / n));
  const { rx, lagRows, lagCols } = autocorrelate2(x, new Float64Array(x.length), ds.nchan, ds.nsub);
  return {
    values: rx.map((v) => v / ds.data.length),
    lagChans: lagRows,
    lagSubs: lagCols,
    nchan: ds.nchan,
    nsub: ds.nsub,
  };
}

describe('the mask-aware ACF: flags bias nothing; zero-filling does', () => {
  it('20 % of the channels flagged (a block and scattered ones): Δν_d unchanged on average', () => {
    const rng = createRng(21);
    const n = 40;
    const ratioMask: number[] = [];
    const ratioNaive: number[] = [];
    for (let i = 0; i < n; i++) {
      const spec = base({ dnuDMhz: 3, dtDS: 60, noise: 0.3 });
      const ds = spectrum(spec, rng);
      const clean = fitCut(maskedAcf(ds, new Uint8Array(ds.data.length)), 'freq', ds.dfMhz);
      // a contiguous block of 16 channels (a persistent band) and 10 scattered channels
      const mask = new Uint8Array(ds.data.length);
      const flagged = new Set<number>();
      const start = 20 + rng.int(60);
      for (let c = start; c < start + 16; c++) flagged.add(c);
      while (flagged.size < 26) flagged.add(rng.int(ds.nchan));
      for (const c of flagged) mask.fill(1, c * ds.nsub, (c + 1) * ds.nsub);
      const aware = fitCut(maskedAcf(ds, mask), 'freq', ds.dfMhz);
      const naive = fitCut(naiveAcf(ds, mask), 'freq', ds.dfMhz);
      ratioMask.push(aware.width / clean.width);
      ratioNaive.push(naive.width / clean.width);
    }
    const stats = (v: number[]) => {
      const m = v.reduce((a, b) => a + b, 0) / v.length;
      const sd = Math.sqrt(v.reduce((a, b) => a + (b - m) ** 2, 0) / (v.length - 1));
      return { m, se: sd / Math.sqrt(v.length) };
    };
    const aware = stats(ratioMask);
    const naive = stats(ratioNaive);
    // mask-aware: statistically equal to the unflagged width (within 3 standard errors of 1)
    expect(Math.abs(aware.m - 1)).toBeLessThan(3 * aware.se + 0.01);
    // zero-filling: the pair count falls with lag, so the width comes out narrower
    expect(naive.m).toBeLessThan(1 - 3 * naive.se);
    expect(naive.m).toBeLessThan(aware.m - 0.05);
  });
});

describe('interference flags', () => {
  it('finds an injected persistent block and bursts, and classifies the block persistent', () => {
    const rng = createRng(31);
    for (let i = 0; i < 10; i++) {
      const block = [40 + i, 41 + i, 42 + i];
      const burst = { chan0: 90, chan1: 92, sub0: 30 + i, sub1: 33 + i, level: 6 };
      const broadband = { chan0: 0, chan1: 127, sub0: 70, sub1: 70, level: 3 };
      const ds = spectrum(
        base({ persistent: { channels: block, level: 3 }, bursts: [burst, broadband] }),
        rng,
      );
      const r = flagRfi(ds, { fence: 1.5, pixelSigma: 5 });
      for (const c of block)
        expect(r.channels.find((f) => f.channel === c)?.kind, `channel ${c}`).toBe('persistent');
      for (let c = burst.chan0; c <= burst.chan1; c++)
        for (let t = burst.sub0; t <= burst.sub1; t++) expect(r.mask[c * ds.nsub + t]).toBe(1);
      expect(r.subints).toContain(70);
    }
  });

  it('on clean scintillating data the default fence flags under 1 % of the pixels', () => {
    const rng = createRng(41);
    let flagged = 0;
    let total = 0;
    for (let i = 0; i < 30; i++) {
      const ds = spectrum(
        base({ dnuDMhz: 1 + 3 * rng.uniform(), dtDS: 40 + 80 * rng.uniform() }),
        rng,
      );
      const r = flagRfi(ds, { fence: 1.5, pixelSigma: 5 });
      flagged += r.flaggedFraction * ds.data.length;
      total += ds.data.length;
    }
    expect(flagged / total).toBeLessThan(0.01);
  });

  it('a starting mask is honoured and labelled as given', () => {
    const ds = spectrum(base(), createRng(51));
    const r = flagRfi(ds, { fence: 1.5, pixelSigma: 5, startMask: [3, 4] });
    expect(r.channels.filter((c) => c.kind === 'given').map((c) => c.channel)).toEqual([3, 4]);
  });
});

describe('arc curvature on a simulated thin screen (known η)', () => {
  it('recovers η of a clear arc within the reported range', () => {
    const rng = createRng(3);
    for (const eta of [5e-5, 1e-4, 2e-4, 4e-4]) {
      const data = simulateScreenDynspec(
        {
          nchan: 256,
          nsub: 128,
          f0Mhz: 1200,
          dfMhz: 1,
          dtS: 10,
          etaS3: eta,
          fWidthMhz: 15,
          images: 300,
          halo: 0.3,
          flux: 1,
          noise: 0.2,
        },
        rng,
      );
      const ds = dynspecFromArray(data, 256, 128, {
        source: 'SBP-E',
        freqs_mhz: { start: 1200, step: 1 },
        times_s: { start: 0, step: 10 },
      });
      const r = analyseDynspec(ds, OPTS);
      expect(r.arc, `η = ${eta}`).not.toBeNull();
      expect(r.arc!.etaLo).toBeLessThanOrEqual(eta * 1.05);
      expect(r.arc!.etaHi).toBeGreaterThanOrEqual(eta * 0.95);
      expect(r.warnings.join(' ')).toMatch(/arc curvature is provisional/);
    }
  });
});

describe('dynamic spectrum input', () => {
  it('long-form rows give the same grid as the array; missing cells are flagged', () => {
    const rng = createRng(61);
    const nchan = 8;
    const nsub = 10;
    const arr = Float64Array.from({ length: nchan * nsub }, () => rng.normal());
    const a = dynspecFromArray(arr, nchan, nsub, { source: 'S', ...AXES });
    const f: number[] = [];
    const t: number[] = [];
    const v: number[] = [];
    for (let c = nchan - 1; c >= 0; c--)
      for (let s = 0; s < nsub; s++) {
        if (c === 2 && s === 4) continue; // a missing cell
        f.push(1200 + 0.5 * c);
        t.push(10 * s);
        v.push(arr[c * nsub + s]);
      }
    const b = dynspecFromRows(Float64Array.from(f), Float64Array.from(t), Float64Array.from(v), {
      source: 'S',
    });
    expect(b.inputMask[2 * nsub + 4]).toBe(1);
    b.data.forEach((x, i) => {
      if (i !== 2 * nsub + 4) expect(x).toBe(a.data[i]);
    });
    expect(b.dfMhz).toBeCloseTo(0.5, 12);
  });

  it('descending frequencies are turned ascending; a non-uniform axis names its entry', () => {
    const arr = Float64Array.from({ length: 8 * 8 }, (_, i) => i);
    const d = dynspecFromArray(arr, 8, 8, {
      source: 'S',
      freqs_mhz: { start: 1500, step: -2 },
      times_s: { start: 0, step: 1 },
    });
    expect(d.freqs[0]).toBe(1486);
    expect(d.data[0]).toBe(56); // the last row of the input is the lowest frequency
    const freqs = [1, 2, 3, 4, 5.5, 6, 7, 8];
    try {
      dynspecFromArray(arr, 8, 8, {
        source: 'S',
        freqs_mhz: freqs,
        times_s: { start: 0, step: 1 },
      });
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as InputError).location.column).toBe('freqs_mhz[4]');
    }
  });

  it('two rows for one cell are refused, naming both', () => {
    expect(() =>
      dynspecFromRows(
        Float64Array.from([1, 1, 2]),
        Float64Array.from([0, 0, 1]),
        Float64Array.from([1, 2, 3]),
        { source: 'S' },
      ),
    ).toThrow(/rows 1 and 2 both give 1 MHz at 0 s/);
  });

  it('too small a spectrum is refused', () => {
    expect(() => dynspecFromArray(new Float64Array(16), 4, 4, { source: 'S', ...AXES })).toThrow(
      /at least 8 channels and 8 sub-integrations/,
    );
  });
});
