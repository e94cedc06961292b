#!/usr/bin/python3
"""Reference for the cube DM-refinement benchmark of `npm run bench`: the same Fourier shifts
and sums as Sightline's DmShifter, in plain NumPy.

Usage: /usr/bin/python3 tests/bench/dm_refine_numpy.py CUBE.npy TEMPLATE.npy TRUTH.json
           SIGHTLINE.json OUT.json [--form cexp|trig]

Inputs: the cube (float64 [nchan, nbin], written once by tests/bench/cube-data.ts, the same file
Sightline reads), the template (float64 [nbin]), the trial DMs and the applied DM from TRUTH.json,
and from SIGHTLINE.json (written by tests/bench/refine-only.ts) Sightline's per-channel weights
w_c, harmonic noise variances s2_c and shifts d_c (turns per pc cm^-3). Those are taken as
given, not recomputed: the benchmark is about the shifts and sums over trial DMs. Channels with
w_c = 0 are left out, as Sightline does.

  load    np.load of both .npy files and the JSON (reported, not part of any comparison);
  rfft    X = np.fft.rfft(cube, axis=1)[:, 1:H+1], T likewise, H = (nbin - 1) // 2 (harmonic 0
          and the Nyquist harmonic dropped);
  setup   Z = w[:, None] * X * conj(T) over the used channels, 2*pi*d, and the noise of the
          summed cross-correlation  norm = sqrt(sum(w^2 s2) * sum |T_k|^2);
  trials  for each trial DM, delta = dm - dm_applied:
            S_k = sum_c Z_ck exp(2 pi i k d_c delta), written one of two ways (--form):
              cexp  (default) the direct transcription,
                      S = (Z * np.exp(1j * np.outer(2*pi*d*delta, k))).sum(axis=0),
                    a fresh (nchan, H) complex array per step; np.exp of a complex array
                    dominates the time (measured here: about 20x slower per element than
                    np.cos on float64 with NumPy 1.24);
              trig  the same sum in real arithmetic on buffers allocated once: the angles
                    np.outer(..., out=), np.cos/np.sin(..., out=) (SIMD-vectorised), and
                    Re S = sum Zr cos - Zi sin, Im S = sum Zr sin + Zi cos by
                    np.einsum('ck,ck->k', ...) (no temporaries); what a NumPy user tuning
                    this loop arrives at;
            C on the bin grid: np.fft.irfft of [0, S_1 .. S_H, 0] times nbin/2, argmax j;
            the maximum of C(phi) = sum_k Re(S_k e^(2 pi i k phi)) refined by Newton steps on
            C'(phi) = 0 (C', C'' analytic, each a vectorised sum over k), kept inside the
            bracket ((j-1)/nbin, (j+1)/nbin) by bisection, to |step| < 1e-13 turns;
            S/N = C_max / norm.

Timing: time.perf_counter() around each stage, one pass each, inside the process (interpreter
start and `import numpy` not included). Writes the S/N curve and the phase of each maximum to
OUT.json and prints one JSON line with the timings and versions.
"""

import json
import sys
import time

import numpy as np


def peak(S, nbin, h, tk, tk2):
    """(C at the maximum over phase, its phase in [-0.5, 0.5)) of harmonics S_1 .. S_h."""
    spec = np.zeros(nbin // 2 + 1, dtype=np.complex128)
    spec[1:h + 1] = S
    grid = np.fft.irfft(spec, nbin) * (nbin / 2)
    j = int(np.argmax(grid))
    lo, hi = (j - 1) / nbin, (j + 1) / nbin
    phi = j / nbin
    for _ in range(60):
        v = S * np.exp(1j * tk * phi)
        c1 = -np.dot(tk, v.imag)
        c2 = -np.dot(tk2, v.real)
        if c1 > 0:
            lo = phi
        else:
            hi = phi
        nxt = phi - c1 / c2 if c2 < 0 else np.nan
        if not (lo < nxt < hi):
            nxt = 0.5 * (lo + hi)
        moved = abs(nxt - phi)
        phi = nxt
        if moved < 1e-13 or hi - lo < 1e-13:
            break
    c = float(np.sum((S * np.exp(1j * tk * phi)).real))
    return c, phi - np.floor(phi + 0.5)


def main():
    args = sys.argv[1:]
    form = "cexp"
    if "--form" in args:
        i = args.index("--form")
        form = args[i + 1] if i + 1 < len(args) else ""
        del args[i:i + 2]
    if len(args) != 5 or form not in ("cexp", "trig"):
        sys.exit(__doc__)
    cube_path, template_path, truth_path, sl_path, out_path = args

    t0 = time.perf_counter()
    cube = np.load(cube_path)
    template = np.load(template_path)
    with open(truth_path) as fh:
        truth = json.load(fh)
    with open(sl_path) as fh:
        sl = json.load(fh)
    w_all = np.array(sl["weights"], dtype=np.float64)
    used = w_all > 0
    w = w_all[used]
    s2 = np.array(sl["s2"], dtype=np.float64)[used]
    d = np.array(sl["d"], dtype=np.float64)[used]
    trials = np.array(truth["trials_dm"], dtype=np.float64)
    dm_applied = float(truth["dm_applied"])
    nchan, nbin = cube.shape
    if template.shape != (nbin,) or len(w_all) != nchan:
        sys.exit(f"shapes disagree: cube {cube.shape}, template {template.shape}, "
                 f"{len(w_all)} weights")
    load_s = time.perf_counter() - t0

    t = time.perf_counter()
    h = (nbin - 1) // 2
    X = np.fft.rfft(cube, axis=1)[:, 1:h + 1]
    T = np.fft.rfft(template)[1:h + 1]
    rfft_s = time.perf_counter() - t

    t = time.perf_counter()
    Z = (w[:, None] * X[used]) * np.conj(T)[None, :]
    norm = np.sqrt(np.sum(w * w * s2) * np.sum(np.abs(T) ** 2))
    k = np.arange(1, h + 1, dtype=np.float64)
    tk = 2 * np.pi * k
    tk2 = tk * tk
    two_pi_d = 2 * np.pi * d
    if form == "trig":
        zr = np.ascontiguousarray(Z.real)
        zi = np.ascontiguousarray(Z.imag)
        ang = np.empty(Z.shape)
        cos = np.empty(Z.shape)
        sin = np.empty(Z.shape)
    setup_s = time.perf_counter() - t

    snr = np.empty(len(trials))
    phase = np.empty(len(trials))
    t = time.perf_counter()
    for i, dm in enumerate(trials):
        delta = dm - dm_applied
        if form == "cexp":
            S = (Z * np.exp(1j * np.outer(two_pi_d * delta, k))).sum(axis=0)
        else:
            np.outer(two_pi_d * delta, k, out=ang)
            np.cos(ang, out=cos)
            np.sin(ang, out=sin)
            S = (np.einsum("ck,ck->k", zr, cos) - np.einsum("ck,ck->k", zi, sin)) + 1j * (
                np.einsum("ck,ck->k", zr, sin) + np.einsum("ck,ck->k", zi, cos))
        c, phi = peak(S, nbin, h, tk, tk2)
        snr[i] = c / norm
        phase[i] = phi
    trials_s = time.perf_counter() - t

    with open(out_path, "w") as fh:
        json.dump({"snr": snr.tolist(), "phase": phase.tolist()}, fh)
    best = int(np.argmax(snr))
    print(json.dumps({
        "form": form,
        "load_s": load_s,
        "rfft_s": rfft_s,
        "setup_s": setup_s,
        "trials_s": trials_s,
        "n_trials": int(len(trials)),
        "used_channels": int(used.sum()),
        "nbin": int(nbin),
        "h": int(h),
        "best_trial": best,
        "best_dm": float(trials[best]),
        "best_snr": float(snr[best]),
        "numpy_version": np.__version__,
        "python_version": sys.version.split()[0],
    }))


if __name__ == "__main__":
    main()
