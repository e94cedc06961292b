import { describe, expect, it } from 'vitest';
import { RealFft } from '../../shared/dsp/fft.js';
import { python, pythonAvailable } from '../helpers/python.js';

// The transform every profile-cube step is built on, checked against numpy.fft (Debian's
// python3-numpy): forward against numpy.fft.fft (and rfft), inverse against numpy.fft.irfft, on
// seeded random input, for powers of two (fft.js directly) and other lengths (Bluestein).
const LENGTHS = [16, 17, 48, 100, 256, 257, 1000, 1024, 2048, 3000];

interface Case {
  n: number;
  x: number[];
  re: number[];
  im: number[];
  back: number[];
}

const SCRIPT = `
import json, sys
import numpy as np
rng = np.random.default_rng(20261202)
out = []
for n in json.load(sys.stdin):
    x = rng.standard_normal(n) * 10.0 ** rng.uniform(-3, 3)
    full = np.fft.fft(x)
    half = np.fft.rfft(x)
    assert np.allclose(full[: n // 2 + 1], half, rtol=0, atol=1e-9 * np.abs(full).max())
    out.append({'n': n, 'x': x.tolist(), 're': full[: n // 2 + 1].real.tolist(),
                'im': full[: n // 2 + 1].imag.tolist(), 'back': np.fft.irfft(half, n).tolist()})
print(json.dumps(out))
`;

describe.skipIf(!pythonAvailable)('RealFft against numpy.fft', () => {
  const cases = pythonAvailable ? python<Case[]>(SCRIPT, LENGTHS) : [];

  it.each(LENGTHS)('n = %i: forward matches numpy.fft.fft to 1e-12 relative', (n) => {
    const c = cases.find((k) => k.n === n)!;
    const fft = new RealFft(n);
    const re = new Float64Array(fft.size);
    const im = new Float64Array(fft.size);
    fft.forward(c.x, re, im);
    let scale = 0;
    for (let k = 0; k < fft.size; k++) scale = Math.max(scale, Math.hypot(c.re[k], c.im[k]));
    let worst = 0;
    for (let k = 0; k < fft.size; k++)
      worst = Math.max(worst, Math.hypot(re[k] - c.re[k], im[k] - c.im[k]) / scale);
    expect(worst).toBeLessThan(1e-12);
  });

  it.each(LENGTHS)('n = %i: inverse matches numpy.fft.irfft to 1e-12 relative', (n) => {
    const c = cases.find((k) => k.n === n)!;
    const fft = new RealFft(n);
    const out = new Float64Array(n);
    fft.inverse(c.re, c.im, out);
    const scale = Math.max(...c.back.map(Math.abs));
    const worst = Math.max(...c.back.map((v, j) => Math.abs(out[j] - v) / scale));
    expect(worst).toBeLessThan(1e-12);
  });
});
