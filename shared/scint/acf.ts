import { autocorrelate2 } from '../dsp/fft2.js';
import { lmFit } from '../fit/lm.js';
import type { DynSpec } from './dynspec.js';

/**
 * Mask-aware 2-D autocorrelation of a dynamic spectrum (science.md "Scintillation"):
 * ΔI = I − mean over unflagged pixels, flagged pixels set to 0; R_ΔI and the mask's own
 * autocorrelation R_W by zero-padded FFT; ACF = R_ΔI / R_W, the mean product over the pixel
 * pairs that exist at each lag, so flagged pixels bias nothing. Lags with fewer than
 * `minPairs` of the pairs at zero lag are left NaN.
 */
export interface Acf {
  /** (2·nchan − 1) × (2·nsub − 1), zero lag at (nchan − 1, nsub − 1) */
  values: Float64Array;
  lagChans: number;
  lagSubs: number;
  nchan: number;
  nsub: number;
}

export function maskedAcf(ds: DynSpec, mask: Uint8Array, minPairs = 0.05): Acf {
  const { nchan, nsub, data } = ds;
  let sum = 0;
  let n = 0;
  for (let i = 0; i < data.length; i++)
    if (!mask[i]) {
      sum += data[i];
      n++;
    }
  const mean = sum / n;
  const x = new Float64Array(data.length);
  const w = new Float64Array(data.length);
  for (let i = 0; i < data.length; i++)
    if (!mask[i]) {
      x[i] = data[i] - mean;
      w[i] = 1;
    }
  const { rx, ry, lagRows, lagCols } = autocorrelate2(x, w, nchan, nsub);
  const zero = ry[(nchan - 1) * lagCols + nsub - 1];
  const values = new Float64Array(rx.length);
  for (let i = 0; i < rx.length; i++) {
    // pair counts are integers; the FFT leaves them within ~1e-9 of one
    const pairs = Math.round(ry[i]);
    values[i] = pairs >= Math.max(1, minPairs * zero) ? rx[i] / pairs : NaN;
  }
  return { values, lagChans: lagRows, lagSubs: lagCols, nchan, nsub };
}

/** The ACF at (channel lag, sub-integration lag). */
export function acfAt(a: Acf, dc: number, dt: number): number {
  return a.values[(dc + a.nchan - 1) * a.lagSubs + dt + a.nsub - 1];
}

export interface CutFit {
  /** half width: HWHM (frequency, MHz) or 1/e width (time, s) */
  width: number;
  widthErr: number;
  amplitude: number;
  offset: number;
  /** lags fitted (MHz or s), the ACF there and the model */
  lags: number[];
  acf: number[];
  model: number[];
  /** the ACF at zero lag (noise spike included) */
  zeroLag: number;
  ok: boolean;
}

/**
 * Fit one cut of the ACF, zero lag excluded (the noise spike; Cordes 1986, from memory), with a
 * constant offset for the bias that subtracting the sample mean leaves:
 *   frequency  A/(1 + (δν/Δν_d)²) + c   — Δν_d its half width at half maximum,
 *   time       A·exp(−(δt/Δt_d)²) + c   — Δt_d its half width at 1/e,
 * by Levenberg–Marquardt over lags up to four times a first width read off the cut (at least
 * eight lags, at most half the axis).
 */
export function fitCut(acf: Acf, axis: 'freq' | 'time', step: number): CutFit {
  const nmax = axis === 'freq' ? acf.nchan - 1 : acf.nsub - 1;
  const at = (j: number) => (axis === 'freq' ? acfAt(acf, j, 0) : acfAt(acf, 0, j));
  const zeroLag = at(0);
  const first = at(1);
  const level = axis === 'freq' ? 0.5 : Math.exp(-1);
  // first guess: where the cut falls below level × its first lag
  let guess = nmax;
  for (let j = 1; j <= nmax; j++) {
    const v = at(j);
    if (Number.isFinite(v) && v < level * first) {
      guess = j;
      break;
    }
  }
  const last = Math.min(Math.max(8, 4 * guess), Math.floor(nmax / 2) || nmax, nmax);
  const lags: number[] = [];
  const y: number[] = [];
  for (let j = 1; j <= last; j++) {
    const v = at(j);
    if (!Number.isFinite(v)) continue;
    lags.push(j * step);
    y.push(v);
  }
  const fail: CutFit = {
    width: NaN,
    widthErr: NaN,
    amplitude: NaN,
    offset: NaN,
    lags,
    acf: y,
    model: [],
    zeroLag,
    ok: false,
  };
  if (y.length < 4 || !(first > 0)) return fail;
  const shape = (u: number) => (axis === 'freq' ? 1 / (1 + u * u) : Math.exp(-u * u));
  const dshape = (u: number) =>
    axis === 'freq' ? (-2 * u) / (1 + u * u) ** 2 : -2 * u * Math.exp(-u * u);
  const fit = lmFit({
    n: y.length,
    p: 3,
    y,
    sigma: y.map(() => 1),
    evaluate(p, out, jac) {
      const [a, wd, c] = [p[0], p[1], p[2]];
      for (let i = 0; i < y.length; i++) {
        const u = lags[i] / wd;
        out[i] = a * shape(u) + c;
        if (jac) {
          jac[i * 3] = shape(u);
          jac[i * 3 + 1] = (a * dshape(u) * -u) / wd;
          jac[i * 3 + 2] = 1;
        }
      }
    },
    start: [first, guess * step, 0],
    min: [0, step * 1e-3, -Math.abs(first)],
    max: [10 * Math.abs(zeroLag) + 10 * Math.abs(first), nmax * step * 4, Math.abs(first)],
  });
  const [a, wd, c] = fit.params;
  return {
    width: wd,
    widthErr: fit.errors[1],
    amplitude: a,
    offset: c,
    lags,
    acf: y,
    model: lags.map((l) => a * shape(l / wd) + c),
    zeroLag,
    ok: a > 0 && wd > 0 && Number.isFinite(fit.errors[1]),
  };
}
