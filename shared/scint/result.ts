import type { ScintPictures, ScintResult } from '../schemas/scint.js';
import type { ScintAnalysis } from './analyse.js';
import type { DynSpec } from './dynspec.js';

/** Largest picture grid along either axis. */
export const PICTURE_MAX = 128;

const sig = (v: number, d = 4) => (Number.isFinite(v) ? Number(v.toPrecision(d)) : 0);

/** Block means of a rows × cols array onto at most PICTURE_MAX × PICTURE_MAX. */
export function downsample(
  values: ArrayLike<number>,
  rows: number,
  cols: number,
  max = PICTURE_MAX,
): { data: Float64Array; rows: number; cols: number } {
  const fr = Math.ceil(rows / max);
  const fc = Math.ceil(cols / max);
  const r2 = Math.ceil(rows / fr);
  const c2 = Math.ceil(cols / fc);
  const data = new Float64Array(r2 * c2);
  const count = new Float64Array(r2 * c2);
  for (let r = 0; r < rows; r++)
    for (let c = 0; c < cols; c++) {
      const v = values[r * cols + c];
      if (!Number.isFinite(v)) continue;
      const i = Math.floor(r / fr) * c2 + Math.floor(c / fc);
      data[i] += v;
      count[i]++;
    }
  for (let i = 0; i < data.length; i++) data[i] = count[i] ? data[i] / count[i] : NaN;
  return { data, rows: r2, cols: c2 };
}

/** The three pictures' data: dynamic spectrum with flags, ACF cuts and centre, secondary. */
export function scintPictures(ds: DynSpec, a: ScintAnalysis): ScintPictures {
  const dyn = downsample(a.filled, ds.nchan, ds.nsub);
  const flags = downsample(Float64Array.from(a.mask), ds.nchan, ds.nsub);
  const { halfChans, halfSubs, values } = a.acfPatch;
  const patch = downsample(values, 2 * halfChans + 1, 2 * halfSubs + 1, 65);
  // positive delays only, in linear power for the block means, back to dB
  const s = a.secondary;
  const half = s.nDelay / 2;
  const lin = new Float64Array(half * s.nFt);
  for (let r = 0; r < half; r++)
    for (let c = 0; c < s.nFt; c++) lin[r * s.nFt + c] = 10 ** (s.db[(r + half) * s.nFt + c] / 10);
  const sec = downsample(lin, half, s.nFt);
  const delayMax = (half - 1) * s.delayStepUs;
  const ftLo = s.ft0Mhz;
  const ftHi = s.ft0Mhz + (s.nFt - 1) * s.ftStepMhz;
  const arc = a.arc
    ? Array.from({ length: 101 }, (_, i) => {
        const ft = ftLo + ((ftHi - ftLo) * i) / 100;
        return { ft_mhz: sig(ft, 6), delay_us: sig(a.arc!.eta * ft * ft, 6) };
      }).filter((p) => p.delay_us <= delayMax)
    : null;
  return {
    dynspec: {
      n_freq: dyn.rows,
      n_time: dyn.cols,
      freq_mhz: [ds.freqs[0], ds.freqs[ds.nchan - 1]],
      time_s: [ds.times[0], ds.times[ds.nsub - 1]],
      values: Array.from(dyn.data, (v) => sig(v)),
      flagged: Array.from(flags.data, (v) => sig(v, 2)),
    },
    acf: {
      freq_cut: a.freqCut.lags.map((l, i) => ({
        lag_mhz: sig(l, 6),
        acf: sig(a.freqCut.acf[i]),
        model: sig(a.freqCut.model[i] ?? NaN),
      })),
      time_cut: a.timeCut.lags.map((l, i) => ({
        lag_s: sig(l, 6),
        acf: sig(a.timeCut.acf[i]),
        model: sig(a.timeCut.model[i] ?? NaN),
      })),
      patch: {
        n_freq_lag: patch.rows,
        n_time_lag: patch.cols,
        freq_lag_mhz: [-halfChans * ds.dfMhz, halfChans * ds.dfMhz],
        time_lag_s: [-halfSubs * ds.dtS, halfSubs * ds.dtS],
        values: Array.from(patch.data, (v) => (Number.isFinite(v) ? sig(v) : null)),
      },
    },
    secondary: {
      n_delay: sec.rows,
      n_ft: sec.cols,
      delay_us: [0, sig(delayMax, 6)],
      ft_mhz: [sig(ftLo, 6), sig(ftHi, 6)],
      db: Array.from(sec.data, (v) => sig(10 * Math.log10(v), 4)),
      arc,
    },
  };
}

/** The result body (everything but the envelope), as `scint@1` lists it. */
export function scintBody(
  ds: DynSpec,
  a: ScintAnalysis,
  opts: { fence: number; pixelSigma: number; c1: number },
): Omit<ScintResult, 'schema' | 'software' | 'created_utc' | 'parameters' | 'input' | 'cautions'> {
  const fmin = ds.freqs[0];
  const fmax = ds.freqs[ds.nchan - 1];
  return {
    source: ds.source,
    mjd: ds.mjd,
    receiver: ds.receiver,
    nchan: ds.nchan,
    nsub: ds.nsub,
    freq_min_mhz: fmin,
    freq_max_mhz: fmax,
    channel_mhz: ds.dfMhz,
    subint_s: ds.dtS,
    rfi: {
      flagged_fraction: a.rfi.flaggedFraction,
      channels_flagged: a.rfi.channels.map((c) => c.channel),
      channels: a.rfi.channels.map((c) => ({
        channel: c.channel,
        freq_mhz: c.freqMhz,
        kind: c.kind,
      })),
      subints_flagged: a.rfi.subints,
      pixels_flagged: a.rfi.pixels,
      snr_cost_fraction: a.rfi.snrCostFraction,
      fence_k: opts.fence,
      pixel_sigma: opts.pixelSigma,
    },
    status: a.status,
    dnu_d_mhz: a.dnuD,
    dnu_d_upper_mhz: a.dnuDUpper,
    tau_lower_us: a.tauLowerUs,
    dnu_d_err_mhz: a.dnuDErr,
    dt_d_s: a.dtD,
    dt_d_err_s: a.dtDErr,
    n_scintles: a.nScintles,
    c1: opts.c1,
    tau_us: a.tauUs,
    tau_err_us: a.tauErrUs,
    ref_freq_mhz: (fmin + fmax) / 2,
    arc_curvature: a.arc
      ? {
          eta_s3: a.arc.eta,
          eta_lo_s3: a.arc.etaLo,
          eta_hi_s3: a.arc.etaHi,
          contrast_db: a.arc.contrastDb,
        }
      : null,
    tau_from_tails: null,
    pictures: scintPictures(ds, a),
    warnings: a.warnings,
  };
}
