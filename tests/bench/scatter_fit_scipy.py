#!/usr/bin/python3
"""Reference for the scattering benchmark of `npm run bench`: scipy curve_fit per band.

Usage: /usr/bin/python3 tests/bench/scatter_fit_scipy.py PROFILES.npy TRUTH.json OUT.json
           [--jac fd|analytic] [--images N] [--limit N]

Fits every profile (row) of PROFILES.npy (float64, shape [profiles, nbin]; written once by
tests/bench/scatter-data.ts, the same file Sightline fits) with the model a careful scipy user
would write for one scattered Gaussian:

  y(x) = b + A * sum_{k=-N..N} exponnorm.pdf(x + k*P, K=tau/s, loc=mu, scale=s),  P = nbin,

x the bin index, tau and s used as |tau| and |s| (the 'lm' method has no bounds and exponnorm
needs K > 0), N = 2 images by default (--images). scipy.stats.exponnorm is the exponentially
modified Gaussian; its pdf is evaluated once per model call on a (2N+1, nbin) array.

  fit    scipy.optimize.curve_fit(model, x, y, p0, sigma=noise) with the defaults: method 'lm'
         (MINPACK lmdif), absolute_sigma=False (covariance scaled by the reduced chi2, as
         Sightline's does), maxfev 200*(n+1); --jac fd (default) lets MINPACK take forward
         differences, --jac analytic passes the closed-form Jacobian of the EMG (Grushka 1972
         form: df/du = (phi - f)/tau, df/ds = (s/tau^2)(f - phi) - phi*u/(s*tau),
         df/dtau = f*(u/tau^2 - 1/tau - s^2/tau^3) + s^2*phi/tau^3, phi the Gaussian);
  start  read off the data: baseline = median; peak = the maximum of the 3-bin running mean;
         height = peak - baseline; area = sum(y - baseline); s = leading half-width at half
         height / sqrt(2 ln 2); tau = max(area/height - sqrt(2 pi)*s, 0.05*s); mu = peak bin;
  noise  the per-bin sigma of each profile from TRUTH.json (the same numbers Sightline gets).

A fit that raises (maxfev reached) is recorded as failed with NaN; a covariance scipy cannot
estimate gives infinite errors (as curve_fit returns them). Timing: time.perf_counter() around
each curve_fit call and around the whole pass (starting values included; loading not), one pass,
in file order. Writes per-profile results to OUT.json and prints one JSON line with the totals
and versions.
"""

import json
import math
import sys
import time
import warnings

import numpy as np
import scipy
from scipy.optimize import OptimizeWarning, curve_fit
from scipy.stats import exponnorm

SQRT_2PI = math.sqrt(2 * math.pi)
HWHM_PER_SIGMA = math.sqrt(2 * math.log(2))


def make_model(nbin, images):
    x = np.arange(nbin, dtype=np.float64)
    shifts = (nbin * np.arange(-images, images + 1, dtype=np.float64))[:, None]

    def model(x_, b, tau, area, mu, s):
        t = abs(tau)
        w = abs(s)
        u = x[None, :] - mu + shifts
        return b + area * exponnorm.pdf(u, t / w, loc=0.0, scale=w).sum(axis=0)

    def jac(x_, b, tau, area, mu, s):
        t = abs(tau)
        w = abs(s)
        u = x[None, :] - mu + shifts
        f = exponnorm.pdf(u, t / w, loc=0.0, scale=w)
        phi = np.exp(-0.5 * (u / w) ** 2) / (SQRT_2PI * w)
        dfdu = ((phi - f) / t).sum(axis=0)
        dfds = ((w / t**2) * (f - phi) - phi * u / (w * t)).sum(axis=0)
        dfdt = (f * (u / t**2 - 1 / t - w**2 / t**3) + w**2 * phi / t**3).sum(axis=0)
        out = np.empty((nbin, 5))
        out[:, 0] = 1.0
        out[:, 1] = area * dfdt * math.copysign(1.0, tau)
        out[:, 2] = f.sum(axis=0)
        out[:, 3] = -area * dfdu
        out[:, 4] = area * dfds * math.copysign(1.0, s)
        return out

    return x, model, jac


def start_values(y):
    n = len(y)
    baseline = float(np.median(y))
    smooth = (np.roll(y, 1) + y + np.roll(y, -1)) / 3
    peak_bin = int(np.argmax(smooth))
    height = max(float(smooth[peak_bin]) - baseline, 1e-12)
    area = max(float(np.sum(y - baseline)), height)
    left = 0
    while left < n // 2 and y[(peak_bin - left - 1) % n] - baseline > height / 2:
        left += 1
    s = max(0.5, (left + 0.5) / HWHM_PER_SIGMA)
    tau = max(0.05 * s, area / height - SQRT_2PI * s)
    return [baseline, tau, area, float(peak_bin), s]


def main():
    args = sys.argv[1:]
    use_jac = "fd"
    images = 2
    limit = None
    for flag in ("--jac", "--images", "--limit"):
        if flag in args:
            i = args.index(flag)
            value = args[i + 1]
            del args[i:i + 2]
            if flag == "--jac":
                if value not in ("fd", "analytic"):
                    sys.exit("--jac must be fd or analytic")
                use_jac = value
            elif flag == "--images":
                images = int(value)
            else:
                limit = int(value)
    if len(args) != 3:
        sys.exit(__doc__)
    npy_path, truth_path, out_path = args

    t0 = time.perf_counter()
    cube = np.load(npy_path)
    with open(truth_path) as fh:
        noise = np.asarray(json.load(fh)["noise"], dtype=np.float64)
    load_s = time.perf_counter() - t0
    count, nbin = cube.shape
    if limit is not None:
        count = min(count, limit)
    x, model, jac = make_model(nbin, images)

    names = ["baseline", "tau", "area_1", "center_1", "width_1"]
    tau = np.full(count, np.nan)
    tau_err = np.full(count, np.nan)
    chi2 = np.full(count, np.nan)
    nfev = np.zeros(count, dtype=np.int64)
    status = []
    params = []
    fit_s = np.zeros(count)
    ones = np.ones(nbin)

    t_all = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", OptimizeWarning)
        warnings.simplefilter("ignore", RuntimeWarning)
        for k in range(count):
            t = time.perf_counter()
            y = cube[k]
            p0 = start_values(y)
            try:
                popt, pcov, info, _, _ = curve_fit(
                    model, x, y, p0=p0, sigma=noise[k] * ones, full_output=True,
                    **({"jac": jac} if use_jac == "analytic" else {}),
                )
                fit_s[k] = time.perf_counter() - t
                resid = (y - model(x, *popt)) / noise[k]
                chi2[k] = float(resid @ resid)
                tau[k] = abs(popt[1])
                tau_err[k] = math.sqrt(pcov[1, 1]) if np.isfinite(pcov[1, 1]) else math.inf
                nfev[k] = int(info["nfev"])
                status.append("fitted")
                p = [float(v) for v in popt]
                p[1] = abs(p[1])
                p[4] = abs(p[4])
                params.append(p)
            except RuntimeError:
                fit_s[k] = time.perf_counter() - t
                status.append("failed")
                params.append(None)
    total_s = time.perf_counter() - t_all

    with open(out_path, "w") as fh:
        json.dump({
            "names": names,
            "tau_bins": [None if not math.isfinite(v) else float(v) for v in tau],
            "tau_err_bins": [None if not math.isfinite(v) else float(v) for v in tau_err],
            "chi2": [None if not math.isfinite(v) else float(v) for v in chi2],
            "nfev": nfev.tolist(),
            "status": status,
            "fit_s": fit_s.tolist(),
            "params": params,
        }, fh)
    print(json.dumps({
        "total_s": total_s,
        "load_s": load_s,
        "n_profiles": int(count),
        "nbin": int(nbin),
        "n_failed": status.count("failed"),
        "jacobian": "analytic" if use_jac == "analytic" else "forward differences (MINPACK lmdif)",
        "method": "lm",
        "images": images,
        "median_nfev": float(np.median(nfev[nfev > 0])) if np.any(nfev > 0) else None,
        "numpy_version": np.__version__,
        "scipy_version": scipy.__version__,
        "python_version": sys.version.split()[0],
    }))


if __name__ == "__main__":
    main()
