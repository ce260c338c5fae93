"""Efficiency of the decay methods: RMSE over Monte-Carlo trials / Cramér–Rao bound.

Single mode, fn 10 Hz, ζ 0.02, 25 dB initial SNR, 1,200 samples at 100 Hz, random phase,
zero offset.  The bound is computed from the Fisher information for
y = A e^(−στ) cos(ωτ + φ) + c + white noise (REFERENCES.md; Kay 1993 ch. 3), via the
delta method to fn and ζ.  Target for the default method (pencil → fit): ratio ≤ 1.10.
Log decrement and the pencil alone are reported beside it.

Run: python tests/bench/bench_decay_efficiency.py [TRIALS]   (default 500; not part of pytest)
"""
import math
import os
import sys
import time

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
sys.path[:0] = [ROOT, os.path.dirname(HERE)]  # the package checkout and tests/ (for _decay_synth)

from _decay_synth import crb_fn_zeta, make_record  # noqa: E402

from identify import PoleprintError  # noqa: E402
from identify.decay import analyse_decay  # noqa: E402

FN, ZETA, SNR_DB, N, FS = 10.0, 0.02, 25.0, 1200, 100.0


def main(trials: int = 500) -> dict:
    rng = np.random.default_rng(12345)
    errors = {m: ([], []) for m in ("fit", "pencil", "logdec")}
    failures = {m: 0 for m in errors}
    start = time.perf_counter()
    s = None
    for k in range(trials):
        modes = [(FN, ZETA, 1.0, rng.uniform(0, 2 * math.pi))]
        rec, _, s = make_record(modes, fs=FS, n=N, snr_db=SNR_DB, seed=50_000 + k)
        for method in errors:
            try:
                r = analyse_decay(rec, method=method)
            except PoleprintError:
                failures[method] += 1
                continue
            p = min(r.poles, key=lambda q: abs(q.natural_frequency_hz - FN))
            errors[method][0].append(p.natural_frequency_hz - FN)
            errors[method][1].append(p.damping_ratio - ZETA)
    elapsed = time.perf_counter() - start
    t = np.arange(N) / FS
    (sd_fn, sd_zeta), = crb_fn_zeta([(FN, ZETA, 1.0, 0.0)], t, s)
    print(f"single mode fn {FN} Hz, zeta {ZETA}, {SNR_DB} dB, {N} samples, {trials} trials "
          f"({elapsed:.0f} s)")
    print(f"Cramer-Rao sd: fn {sd_fn:.3e} Hz, zeta {sd_zeta:.3e}")
    out = {}
    for method, (efn, ez) in errors.items():
        efn, ez = np.asarray(efn), np.asarray(ez)
        r_fn = math.sqrt(np.mean(efn ** 2)) / sd_fn
        r_z = math.sqrt(np.mean(ez ** 2)) / sd_zeta
        out[method] = (r_fn, r_z)
        label = "default (pencil -> fit)" if method == "fit" else method
        print(f"{label:24s} RMSE/CRB fn {r_fn:.3f}  zeta {r_z:.3f}  bias zeta {np.mean(ez) / sd_zeta:+.2f} sd"
              f"  failures {failures[method]}")
    ok = out["fit"][0] <= 1.10 and out["fit"][1] <= 1.10
    print(f"target <= 1.10 for the default method: {'met' if ok else 'NOT met'}")
    return out


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 500)
