#!/usr/bin/python3
"""Reference for the batch benchmark of `npm run bench`: many small DM fits, one after another.

Usage: /usr/bin/python3 tests/bench/dm_batch_numpy.py IN_DIR OUT_DIR

For every IN_DIR/*.csv in sorted order (the small residual tables run.mjs writes, one visit
each; the same files `sightline batch` fits), in ONE Python process:

  read   dm_fit_numpy.load(path)  (np.loadtxt, as in the large DM benchmark);
  fit    dm_fit_numpy.fit(...)    (the same vectorised weighted least squares, imported, not
                                   copied);
  write  OUT_DIR/<file stem>.json: {"visits": [{source, mjd_first, n_toas, dm, dm_err,
         dm_err_scaled, offset_us, chi2, dof, reduced_chi2}]} (json.dump; NaN written as null).

It is an in-process loop on purpose: calling `python3 dm_fit_numpy.py FILE` once per file would
start 10^5 interpreters and import NumPy 10^5 times (about 0.1-0.2 s each, hours in all), which
would measure Python's start-up, not the fit; a Python user with this many files writes this
loop. Prints one JSON line on stdout: loop_s (time.perf_counter() around the whole loop; the
interpreter start and `import numpy` are outside it, but inside the process's wall clock that
run.mjs reports), n_jobs, n_fitted and versions.
"""

import json
import math
import os
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import dm_fit_numpy as ref  # noqa: E402

KEYS = ["mjd_first", "dm", "dm_err", "dm_err_scaled", "offset_us", "chi2", "reduced_chi2"]


def number(x):
    x = float(x)
    return x if math.isfinite(x) else None


def main():
    if len(sys.argv) != 3:
        sys.exit(__doc__)
    in_dir, out_dir = sys.argv[1:]
    os.makedirs(out_dir, exist_ok=True)
    files = sorted(f for f in os.listdir(in_dir) if f.endswith(".csv"))
    fitted = 0
    t0 = time.perf_counter()
    for name in files:
        names, src, mjd, freq, err, res = ref.load(os.path.join(in_dir, name))
        v = ref.fit(src, mjd, freq, err, res)
        visits = []
        for i in range(len(v["dm"])):
            rec = {"source": names[int(v["source"][i])], "n_toas": int(v["n_toas"][i]),
                   "dof": int(v["dof"][i])}
            for k in KEYS:
                rec[k] = number(v[k][i])
            visits.append(rec)
            fitted += rec["dm"] is not None
        with open(os.path.join(out_dir, name[:-4] + ".json"), "w") as fh:
            json.dump({"visits": visits}, fh)
    loop_s = time.perf_counter() - t0
    print(json.dumps({
        "loop_s": loop_s,
        "n_jobs": len(files),
        "n_fitted": fitted,
        "numpy_version": np.__version__,
        "python_version": sys.version.split()[0],
    }))


if __name__ == "__main__":
    main()
