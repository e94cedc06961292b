#!/usr/bin/python3
"""Reference for `npm run bench`: DM per visit with plain, vectorised NumPy.

Usage: /usr/bin/python3 tests/bench/dm_fit_numpy.py TOAS.csv [--out VISITS.csv] [--repeat N]

Does what a careful NumPy user would write for the same job as `sightline dm fit` on a residual
table (columns source,mjd,freq_mhz,err_us,residual_us):

  load   np.loadtxt (NumPy's C reader) with a converter that turns each source name into a small
         integer code in order of first appearance (like Sightline's interning);
  group  lexsort by (source, mjd); a new visit starts at a new source or after a gap > 0.5 day
         (np.diff, then the start index of every visit);
  fit    per visit the 2-parameter weighted least squares  r_i = a + DM * K*1e6/nu_i^2,
         weights 1/sigma_i^2, in closed form from segment sums (np.add.reduceat) of the normal
         equations, with the regressor and data centred on their weighted means first so the
         2x2 system does not lose digits (two passes, still fully vectorised);
         gives DM, its formal error, the error scaled by sqrt(reduced chi2) when that is > 1,
         offset, chi2, dof and reduced chi2; visits with a single frequency are unconstrained
         (NaN), as in Sightline;
  write  (with --out) one CSV line per visit with 17 significant digits, for the agreement check.

Prints one JSON object on stdout: load_s, fit_s, write_s, total_s (time.perf_counter(), inside
the process: interpreter start and `import numpy` are not included; fit_s is the best of
--repeat runs, default 1, and total_s = load_s + first fit run + write_s), fit_runs_s, n_rows,
n_visits, n_unconstrained, first_dms (the first five visits in (source, time) order) and versions.
"""

import json
import sys
import time

import numpy as np

K_CONVENTIONAL = 1 / 2.41e-4  # s MHz^2 pc^-1 cm^3, the conventional dispersion constant
GAP_DAYS = 0.5


def load(path):
    codes = {}
    data = np.loadtxt(
        path,
        delimiter=",",
        skiprows=1,
        usecols=(0, 1, 2, 3, 4),
        converters={0: lambda name: codes.setdefault(name, len(codes))},
        dtype=np.float64,
    )
    # the header must be the one the benchmark writes (column order is fixed here, not free)
    with open(path) as fh:
        header = fh.readline().strip().split(",")
    if header != ["source", "mjd", "freq_mhz", "err_us", "residual_us"]:
        sys.exit(f"unexpected header {header}")
    names = [n.decode() if isinstance(n, bytes) else str(n) for n in codes]
    return names, data[:, 0].astype(np.int64), data[:, 1], data[:, 2], data[:, 3], data[:, 4]


def fit(src, mjd, freq, err, res):
    order = np.lexsort((mjd, src))
    src, mjd, freq, err, res = src[order], mjd[order], freq[order], err[order], res[order]
    n = len(mjd)
    new_visit = (src[1:] != src[:-1]) | (np.diff(mjd) > GAP_DAYS)
    starts = np.concatenate(([0], np.flatnonzero(new_visit) + 1))
    counts = np.diff(np.append(starts, n))

    w = 1.0 / (err * err)
    x = (K_CONVENTIONAL * 1e6) / (freq * freq)  # delay per unit DM, microseconds
    sw = np.add.reduceat(w, starts)
    xbar = np.add.reduceat(w * x, starts) / sw
    ybar = np.add.reduceat(w * res, starts) / sw
    xc = x - np.repeat(xbar, counts)
    yc = res - np.repeat(ybar, counts)
    sxx = np.add.reduceat(w * xc * xc, starts)
    sxy = np.add.reduceat(w * xc * yc, starts)

    # fewer than two distinct frequencies: DM not constrained (Sightline reports no number)
    constrained = np.maximum.reduceat(freq, starts) > np.minimum.reduceat(freq, starts)
    with np.errstate(divide="ignore", invalid="ignore"):
        dm = np.where(constrained, sxy / sxx, np.nan)
        dm_err = np.where(constrained, 1.0 / np.sqrt(sxx), np.nan)
        offset = ybar - dm * xbar
        r = yc - np.repeat(dm, counts) * xc
        chi2 = np.add.reduceat(w * r * r, starts)
        dof = counts - 2
        red = np.where(dof > 0, chi2 / dof, np.nan)
        dm_err_scaled = np.where(red > 1, dm_err * np.sqrt(red), dm_err)
    return {
        "source": src[starts],
        "mjd_first": mjd[starts],
        "n_toas": counts,
        "dm": dm,
        "dm_err": dm_err,
        "dm_err_scaled": dm_err_scaled,
        "offset_us": offset,
        "chi2": chi2,
        "dof": dof,
        "reduced_chi2": red,
    }


def write(path, names, v):
    cols = ["source", "mjd_first", "n_toas", "dm", "dm_err", "dm_err_scaled", "offset_us",
            "chi2", "dof", "reduced_chi2"]
    table = np.column_stack([v[c].astype(np.float64) for c in cols])
    with open(path, "w") as fh:
        fh.write("# sources: " + ",".join(names) + "\n")
        np.savetxt(fh, table, delimiter=",", header=",".join(cols), comments="",
                   fmt=["%d", "%.10f", "%d"] + ["%.17g"] * 4 + ["%.17g", "%d", "%.17g"])


def main():
    args = sys.argv[1:]
    out = None
    repeat = 1
    if "--out" in args:
        i = args.index("--out")
        out = args[i + 1]
        del args[i:i + 2]
    if "--repeat" in args:
        i = args.index("--repeat")
        repeat = max(1, int(args[i + 1]))
        del args[i:i + 2]
    if len(args) != 1:
        sys.exit(__doc__)
    t0 = time.perf_counter()
    names, src, mjd, freq, err, res = load(args[0])
    t1 = time.perf_counter()
    fit_runs = []
    for _ in range(repeat):
        t = time.perf_counter()
        v = fit(src, mjd, freq, err, res)
        fit_runs.append(time.perf_counter() - t)
    t2 = time.perf_counter()
    if out:
        write(out, names, v)
    t3 = time.perf_counter()
    print(json.dumps({
        "load_s": t1 - t0,
        "fit_s": min(fit_runs),
        "fit_runs_s": fit_runs,
        "write_s": t3 - t2,
        "total_s": (t1 - t0) + fit_runs[0] + (t3 - t2),
        "n_rows": int(len(mjd)),
        "n_visits": int(len(v["dm"])),
        "n_unconstrained": int(np.isnan(v["dm"]).sum()),
        "first_dms": [
            {"source": names[int(v["source"][i])], "mjd_first": float(v["mjd_first"][i]),
             "dm": float(v["dm"][i])}
            for i in range(min(5, len(v["dm"])))
        ],
        "numpy_version": np.__version__,
        "python_version": sys.version.split()[0],
    }))


if __name__ == "__main__":
    main()
