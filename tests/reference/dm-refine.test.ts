import { describe, expect, it } from 'vitest';
import { analyseCube, prepareTemplate } from '../../shared/cubes/context.js';
import { cubeFromProfiles } from '../../shared/cubes/cube.js';
import { DmShifter, matchedWeights, shiftPerDm } from '../../shared/cubes/refine.js';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { simulateCube, simulateTemplate } from '../../shared/sim/cubes.js';
import { createRng } from '../../shared/sim/random.js';
import { python, pythonAvailable } from '../helpers/python.js';

// The S/N curve of `dm refine` recomputed with numpy.fft.rfft and scipy.optimize (Debian's
// python3-numpy and python3-scipy) from the same channels, weights and shifts: each channel's
// harmonics 1…H times e^(2πik·d_c·ΔDM), summed with weights w_c·T̄_k, the cross-correlation
// maximised over phase (bounded scalar search around the best of a 64× oversampled inverse
// FFT), divided by √(Σ w_c² s_c² Σ|T_k|²).
const SCRIPT = `
import json, sys
import numpy as np
from scipy.optimize import minimize_scalar
d = json.load(sys.stdin)
nbin = d['nbin']
h = (nbin - 1) // 2
k = np.arange(1, h + 1)
X = np.fft.rfft(np.array(d['data']).reshape(-1, nbin), axis=1)[:, 1:h + 1]
T = np.fft.rfft(np.array(d['template']))[1:h + 1]
w = np.array(d['weights']); s2 = np.array(d['s2']); dc = np.array(d['d'])
norm = np.sqrt(np.sum(w ** 2 * s2) * np.sum(np.abs(T) ** 2))
Z = (w[:, None] * X) * np.conj(T)[None, :]
out = []
for delta in d['deltas']:
    S = np.sum(Z * np.exp(2j * np.pi * np.outer(dc * delta, k)), axis=0)
    M = 64 * nbin
    spec = np.zeros(M // 2 + 1, complex)
    spec[1:h + 1] = S
    grid = np.fft.irfft(spec, M) * M / 2
    j = int(np.argmax(grid))
    C = lambda phi: -np.sum((S * np.exp(2j * np.pi * k * phi)).real)
    r = minimize_scalar(C, bounds=((j - 1) / M, (j + 1) / M), method='bounded',
                        options={'xatol': 1e-13})
    out.append(-r.fun / norm)
print(json.dumps(out))
`;

describe.skipIf(!pythonAvailable)('dm refine S/N curve against numpy/scipy', () => {
  it('matches to 1e-9 relative over trial DMs on both sides of the truth', () => {
    const k = dispersionConstant('conventional');
    const nbin = 128;
    const comps = [{ weight: 1, offset: 0, width: 0.02 }];
    const { set } = simulateCube(
      {
        source: 'SBP-C',
        mjd: '60400.5',
        periodS: 0.00193,
        nbin,
        freqsMhz: Array.from({ length: 16 }, (_, c) => 1150 + (c + 0.5) * 37.5),
        dmApplied: 47.12,
        dmTrue: 47.125,
        refFreqMhz: 1400,
        k: k.value,
        phase: 0.41,
        components: comps,
        amplitude: () => 5,
        noise: 1,
        flagged: [6],
      },
      createRng(9),
    );
    const cube = cubeFromProfiles(set);
    const template = simulateTemplate({ nbin, components: comps }, 0.5);
    const ctx = analyseCube(
      cube,
      prepareTemplate({ ...set, bands: [{ freqMhz: 1400, bins: template }] }, cube),
    );
    const weights = matchedWeights(ctx);
    expect(weights[6]).toBe(0); // the flagged channel carries no weight
    const d = shiftPerDm(cube.freqs, cube.periodS, 1400, k);
    const shifter = new DmShifter(ctx, weights, d);
    const deltas = Array.from({ length: 21 }, (_, i) => -0.01 + i * 0.001);
    const ours = deltas.map((x) => shifter.snrAt(x).snr);
    const used = Array.from(weights, (w) => w > 0);
    const ref = python<number[]>(SCRIPT, {
      nbin,
      data: Array.from(cube.data).filter((_, i) => used[Math.floor(i / nbin)]),
      template: Array.from(template),
      weights: Array.from(weights).filter((_, c) => used[c]),
      s2: Array.from(ctx.s2).filter((_, c) => used[c]),
      d: Array.from(d).filter((_, c) => used[c]),
      deltas,
    });
    for (let i = 0; i < deltas.length; i++)
      expect(Math.abs(ours[i] - ref[i]) / ref[i]).toBeLessThan(1e-9);
    // and the curve peaks near the injected ΔDM of +0.005
    const best = deltas[ours.indexOf(Math.max(...ours))];
    expect(Math.abs(best - 0.005)).toBeLessThanOrEqual(0.001);
  });
});
