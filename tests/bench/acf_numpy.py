#!/usr/bin/python3
"""Reference for the dynamic-spectrum ACF benchmark of `npm run bench`: the mask-aware 2-D
autocorrelation of Sightline's maskedAcf, in plain NumPy.

Usage: /usr/bin/python3 tests/bench/acf_numpy.py DYNSPEC.npy OUT.npy [--repeat N]
           [--min-pairs F]

Input: the dynamic spectrum (float64 [nchan, nsub], written once by tests/bench/acf-data.ts, the
same file Sightline reads); NaN pixels are the flagged ones.

  load    np.load and the mask np.isnan (reported, not part of any comparison);
  acf     best of --repeat (default 3) passes, each timed whole (time.perf_counter()), with its
          stages timed inside:
            prep       W = unflagged (1.0/0.0), mean over unflagged pixels,
                       dI = np.where(mask, 0, I - mean);
            transforms np.fft.rfft2(dI, s=(R, C)) and np.fft.rfft2(W, s=(R, C)) (zero padding
                       by s=), R, C the powers of two >= 2*nchan, 2*nsub (Sightline's padding;
                       scipy.fft.next_fast_len of 2n - 1 gives the same sizes here, reported),
                       |X|^2 as X.real**2 + X.imag**2, np.fft.irfft2(..., s=(R, C)) of each;
            crop       lags -(n-1) .. n-1 of both, by four block copies into [2n-1, 2m-1]
                       arrays with zero lag at [nchan-1, nsub-1];
            divide     pairs = np.rint(R_W); ACF = R_dI / pairs where pairs >= max(1,
                       min_pairs * R_W at zero lag) (min_pairs 0.05, Sightline's default), NaN
                       elsewhere.
Memory: resource.getrusage(RUSAGE_SELF).ru_maxrss (the process's peak resident set, KiB on
Linux) after loading and after the first pass.

Writes the ACF of the last pass to OUT.npy and prints one JSON line with the timings, sizes and
versions. The NumPy FFT is single-threaded (pocketfft).
"""

import json
import resource
import sys
import time

import numpy as np


def next_pow2(n):
    p = 1
    while p < n:
        p <<= 1
    return p


def crop(full, nchan, nsub):
    """Lags -(nchan-1) .. nchan-1, -(nsub-1) .. nsub-1 of a circular [R, C] autocorrelation."""
    R, C = full.shape
    out = np.empty((2 * nchan - 1, 2 * nsub - 1))
    a, b = nchan - 1, nsub - 1
    out[:a, :b] = full[R - a:, C - b:]
    out[:a, b:] = full[R - a:, :nsub]
    out[a:, :b] = full[:nchan, C - b:]
    out[a:, b:] = full[:nchan, :nsub]
    return out


def masked_acf(data, mask, min_pairs, stages):
    nchan, nsub = data.shape
    R, C = next_pow2(2 * nchan), next_pow2(2 * nsub)

    t = time.perf_counter()
    good = ~mask
    W = good.astype(np.float64)
    mean = data[good].mean()
    dI = np.where(mask, 0.0, data - mean)
    stages["prep_s"] = time.perf_counter() - t

    t = time.perf_counter()
    X = np.fft.rfft2(dI, s=(R, C))
    rx = np.fft.irfft2(X.real ** 2 + X.imag ** 2, s=(R, C))
    del X
    Y = np.fft.rfft2(W, s=(R, C))
    rw = np.fft.irfft2(Y.real ** 2 + Y.imag ** 2, s=(R, C))
    del Y
    stages["transforms_s"] = time.perf_counter() - t

    t = time.perf_counter()
    rx = crop(rx, nchan, nsub)
    rw = crop(rw, nchan, nsub)
    stages["crop_s"] = time.perf_counter() - t

    t = time.perf_counter()
    zero = rw[nchan - 1, nsub - 1]
    pairs = np.rint(rw)
    acf = np.full(rx.shape, np.nan)
    np.divide(rx, pairs, out=acf, where=pairs >= max(1.0, min_pairs * zero))
    stages["divide_s"] = time.perf_counter() - t
    return acf, (R, C)


def main():
    args = sys.argv[1:]
    opts = {"--repeat": "3", "--min-pairs": "0.05"}
    for name in list(opts):
        if name in args:
            i = args.index(name)
            if i + 1 >= len(args):
                sys.exit(__doc__)
            opts[name] = args[i + 1]
            del args[i:i + 2]
    if len(args) != 2:
        sys.exit(__doc__)
    dynspec_path, out_path = args
    repeat = int(opts["--repeat"])
    min_pairs = float(opts["--min-pairs"])
    if repeat < 1:
        sys.exit("--repeat needs a positive integer")

    t0 = time.perf_counter()
    data = np.load(dynspec_path)
    if data.ndim != 2 or data.dtype != np.float64:
        sys.exit(f"expected a 2-D float64 array, found {data.dtype} {data.shape}")
    mask = np.isnan(data)
    load_s = time.perf_counter() - t0
    rss_loaded_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024 / 1e6

    runs = []
    stage_runs = []
    acf = None
    rss_first_mb = 0.0
    for k in range(repeat):
        acf = None  # let the previous pass's arrays go before the next allocates
        stages = {}
        t = time.perf_counter()
        acf, size = masked_acf(data, mask, min_pairs, stages)
        runs.append(time.perf_counter() - t)
        stage_runs.append(stages)
        if k == 0:
            rss_first_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024 / 1e6
    best = int(np.argmin(runs))

    nchan, nsub = data.shape
    np.save(out_path, acf)
    try:
        import scipy.fft
        fast = [scipy.fft.next_fast_len(2 * nchan - 1, real=True),
                scipy.fft.next_fast_len(2 * nsub - 1, real=True)]
    except ImportError:
        fast = None
    print(json.dumps({
        "load_s": load_s,
        "acf_s": runs[best],
        "acf_runs_s": runs,
        "stages_s": stage_runs[best],
        "nchan": int(nchan),
        "nsub": int(nsub),
        "padded": [int(size[0]), int(size[1])],
        "next_fast_len": fast,
        "flagged_pixels": int(mask.sum()),
        "zero_lag": float(acf[nchan - 1, nsub - 1]),
        "nan_lags": int(np.isnan(acf).sum()),
        "max_rss_loaded_mb": rss_loaded_mb,
        "max_rss_first_pass_mb": rss_first_mb,
        "max_rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024 / 1e6,
        "numpy_version": np.__version__,
        "python_version": sys.version.split()[0],
    }))


if __name__ == "__main__":
    main()
