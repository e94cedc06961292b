import { describe, expect, it } from 'vitest';
import { autocorrelate2, Fft2 } from '../../shared/dsp/fft2.js';
import { maskedAcf } from '../../shared/scint/acf.js';
import { dynspecFromArray } from '../../shared/scint/dynspec.js';
import { createRng } from '../../shared/sim/random.js';
import { python, pythonAvailable } from '../helpers/python.js';

// The 2-D transforms of the scintillation analysis against Debian's python3-numpy and
// python3-scipy: Fft2 against numpy.fft.fft2/ifft2, the two-at-once autocorrelation against
// scipy.signal.correlate2d (mode 'full'), and the mask-aware ACF against the ratio of two
// correlate2d calls — all on seeded random data, to 1e-9 relative.

const rng = createRng(20261202);
const rand = (n: number) => Float64Array.from({ length: n }, () => rng.normal());

describe.skipIf(!pythonAvailable)('2-D FFT and autocorrelation against numpy and scipy', () => {
  it('Fft2 matches numpy.fft.fft2 (forward) and ifft2 (inverse) to 1e-9 relative', () => {
    for (const [rows, cols] of [
      [8, 16],
      [32, 8],
      [64, 128],
    ]) {
      const re = rand(rows * cols);
      const im = rand(rows * cols);
      const a = new Float64Array(2 * rows * cols);
      for (let i = 0; i < rows * cols; i++) {
        a[2 * i] = re[i];
        a[2 * i + 1] = im[i];
      }
      const ref = python<{ fre: number[]; fim: number[] }>(
        `
import json, sys
import numpy as np
d = json.load(sys.stdin)
x = (np.array(d['re']) + 1j * np.array(d['im'])).reshape(d['rows'], d['cols'])
X = np.fft.fft2(x)
print(json.dumps({'fre': X.real.ravel().tolist(), 'fim': X.imag.ravel().tolist()}))
`,
        { re: Array.from(re), im: Array.from(im), rows, cols },
      );
      const fft = new Fft2(rows, cols);
      const f = a.slice();
      fft.transform(f);
      let scale = 0;
      for (let i = 0; i < rows * cols; i++)
        scale = Math.max(scale, Math.hypot(ref.fre[i], ref.fim[i]));
      for (let i = 0; i < rows * cols; i++) {
        expect(Math.abs(f[2 * i] - ref.fre[i]) / scale).toBeLessThan(1e-9);
        expect(Math.abs(f[2 * i + 1] - ref.fim[i]) / scale).toBeLessThan(1e-9);
      }
      // and back (numpy.fft.ifft2 divides by rows·cols as the inverse here does)
      fft.transform(f, true);
      for (let i = 0; i < 2 * rows * cols; i++) expect(Math.abs(f[i] - a[i])).toBeLessThan(1e-12);
    }
  });

  it('autocorrelate2 matches scipy.signal.correlate2d(x, x, "full") for two arrays at once', () => {
    const rows = 13;
    const cols = 21;
    const x = rand(rows * cols);
    const y = Float64Array.from({ length: rows * cols }, () => (rng.uniform() < 0.8 ? 1 : 0));
    const { rx, ry, lagRows, lagCols } = autocorrelate2(x, y, rows, cols);
    const ref = python<{ rx: number[]; ry: number[] }>(
      `
import json, sys
import numpy as np
from scipy.signal import correlate2d
d = json.load(sys.stdin)
x = np.array(d['x']).reshape(d['rows'], d['cols'])
y = np.array(d['y']).reshape(d['rows'], d['cols'])
print(json.dumps({'rx': correlate2d(x, x, 'full').ravel().tolist(),
                  'ry': correlate2d(y, y, 'full').ravel().tolist()}))
`,
      { x: Array.from(x), y: Array.from(y), rows, cols },
    );
    expect(lagRows).toBe(2 * rows - 1);
    expect(lagCols).toBe(2 * cols - 1);
    const sx = Math.max(...ref.rx.map(Math.abs));
    const sy = Math.max(...ref.ry.map(Math.abs));
    ref.rx.forEach((v, i) => expect(Math.abs(rx[i] - v) / sx).toBeLessThan(1e-9));
    ref.ry.forEach((v, i) => expect(Math.abs(ry[i] - v) / sy).toBeLessThan(1e-9));
  });

  it('the mask-aware ACF equals correlate2d(ΔI·W) / correlate2d(W) over lags with enough pairs', () => {
    const nchan = 24;
    const nsub = 16;
    const data = rand(nchan * nsub).map((v) => v + 3);
    // flag two channels and a few pixels (NaN: flagged on input)
    for (let t = 0; t < nsub; t++) data[5 * nsub + t] = NaN;
    for (let t = 0; t < nsub; t++) data[6 * nsub + t] = NaN;
    data[10 * nsub + 3] = NaN;
    data[17 * nsub + 9] = NaN;
    const ds = dynspecFromArray(data, nchan, nsub, {
      source: 'SBP-B',
      freqs_mhz: { start: 1200, step: 1 },
      times_s: { start: 0, step: 10 },
    });
    const acf = maskedAcf(ds, ds.inputMask, 0.05);
    const ref = python<{ acf: Array<number | null> }>(
      `
import json, sys
import numpy as np
from scipy.signal import correlate2d
d = json.load(sys.stdin)
x = np.array(d['x'], dtype=float).reshape(d['nchan'], d['nsub'])
w = np.isfinite(x).astype(float)
dx = np.where(w > 0, x - np.nanmean(x), 0.0)
num = correlate2d(dx, dx, 'full')
pairs = np.rint(correlate2d(w, w, 'full'))
zero = pairs[d['nchan'] - 1, d['nsub'] - 1]
acf = np.where(pairs >= max(1, 0.05 * zero), num / np.maximum(pairs, 1), np.nan)
print(json.dumps({'acf': [None if np.isnan(v) else float(v) for v in acf.ravel()]}))
`,
      { x: Array.from(data, (v) => (Number.isNaN(v) ? null : v)), nchan, nsub },
    );
    const scale = Math.abs(ref.acf[(nchan - 1) * (2 * nsub - 1) + nsub - 1]!);
    ref.acf.forEach((v, i) => {
      if (v === null) expect(Number.isNaN(acf.values[i])).toBe(true);
      else expect(Math.abs(acf.values[i] - v) / scale).toBeLessThan(1e-9);
    });
  });
});
