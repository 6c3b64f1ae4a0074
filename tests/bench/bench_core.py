"""Benchmark of the computation core (not part of the test run).

Runs the full analysis on N random readings and prints readings per second and two ratios measured in
the same run:

* against a plain per-reading Python loop doing the same work (cmath/math; target: at least 100x faster);
* against the bare numpy Fortescue matrix product on the same voltage and current phasor arrays
  (target: the whole analysis within 3x of it).

Usage: python tests/bench/bench_core.py [N]     (default N = 1,000,000)
"""
from __future__ import annotations

import cmath
import math
import sys
import time

import numpy as np

from fieldpad.core.analysis import analyze, analyze_block
from fieldpad.core.phasors import polar
from fieldpad.core.sequence import FORTESCUE

A = cmath.exp(2j * math.pi / 3)


def random_readings(n: int, seed: int = 1):
    rng = np.random.default_rng(seed)
    cols = {}
    for name, base in (("va", 0.0), ("vb", -120.0), ("vc", 120.0)):
        cols[name] = 277.0 * (1 + 0.03 * rng.standard_normal(n))
        cols[name + "_deg"] = base + 2.0 * rng.standard_normal(n)
    for name, base in (("ia", -30.0), ("ib", -150.0), ("ic", 90.0)):
        cols[name] = 100.0 * (1 + 0.2 * rng.standard_normal(n)).clip(0.0)
        cols[name + "_deg"] = base + 10.0 * rng.standard_normal(n)
    cols["i_n"] = 20.0 * rng.random(n)
    cols["nominal_v"] = np.full(n, 480.0)
    return cols, np.zeros(n, np.int8)


def loop_analysis(cols, i):
    """The same core work for one reading, in plain Python."""
    v = [cmath.rect(cols[p][i], math.radians(cols[p + "_deg"][i])) for p in ("va", "vb", "vc")]
    c = [cmath.rect(cols[p][i], math.radians(cols[p + "_deg"][i])) for p in ("ia", "ib", "ic")]
    v0, v1, v2 = (sum(v) / 3, (v[0] + A * v[1] + A * A * v[2]) / 3, (v[0] + A * A * v[1] + A * v[2]) / 3)
    i0, i1, i2 = (sum(c) / 3, (c[0] + A * c[1] + A * A * c[2]) / 3, (c[0] + A * A * c[1] + A * c[2]) / 3)
    vuf = 100 * min(abs(v1), abs(v2)) / max(abs(v1), abs(v2))
    iuf = 100 * min(abs(i1), abs(i2)) / max(abs(i1), abs(i2))
    ll = [abs(v[0] - v[1]), abs(v[1] - v[2]), abs(v[2] - v[0])]
    avg = sum(ll) / 3
    lvur = 100 * max(abs(x - avg) for x in ll) / avg
    ln = [abs(x) for x in v]
    pvur = 100 * max(abs(x - sum(ln) / 3) for x in ln) / (sum(ln) / 3)
    s = [v[k] * c[k].conjugate() for k in range(3)]
    p = sum(x.real for x in s)
    q = sum(x.imag for x in s)
    s_ar = sum(abs(v[k]) * abs(c[k]) for k in range(3))
    i_n = abs(sum(c))
    rot = "ABC" if abs(v1) >= 2 * abs(v2) else ("ACB" if abs(v2) >= 2 * abs(v1) else "unknown")
    return v0, v1, v2, i0, i1, i2, vuf, iuf, lvur, pvur, p, q, s_ar, i_n, rot


def best_of(fn, repeat=3):
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    cols, system = random_readings(n)
    print(f"readings: {n:,}")

    t_full = best_of(lambda: analyze(cols, system))
    print(f"full analysis (numpy, vectorised): {t_full:.3f} s  = {n / t_full:,.0f} readings/s")

    n_loop = min(n, 20_000)
    t = time.perf_counter()
    for i in range(n_loop):
        loop_analysis(cols, i)
    t_loop = (time.perf_counter() - t) * n / n_loop
    print(f"plain Python loop, core subset only (timed on {n_loop:,}, scaled): {t_loop:.3f} s"
          f"  = {n / t_loop:,.0f} readings/s")

    n_same = min(n, 2_000)
    one = [{k: v[i:i + 1] for k, v in cols.items()} for i in range(n_same)]
    t = time.perf_counter()
    for i in range(n_same):
        analyze_block(one[i], system[i:i + 1])
    t_same = (time.perf_counter() - t) * n / n_same
    print(f"per-reading loop calling the same analysis (timed on {n_same:,}, scaled): {t_same:.3f} s")

    vm = [cols[p] for p in ("va", "vb", "vc")]
    im = [cols[p] for p in ("ia", "ib", "ic")]
    f_t = FORTESCUE.T.copy()

    def with_conversion():
        v = np.stack([polar(m, cols[p + "_deg"]) for m, p in zip(vm, ("va", "vb", "vc"))], axis=-1)
        i = np.stack([polar(m, cols[p + "_deg"]) for m, p in zip(im, ("ia", "ib", "ic"))], axis=-1)
        return v @ f_t, i @ f_t

    t_conv = best_of(with_conversion)
    v, i = (np.stack([polar(cols[p], cols[p + "_deg"]) for p in ph], axis=-1)
            for ph in (("va", "vb", "vc"), ("ia", "ib", "ic")))
    t_bare = best_of(lambda: (v @ f_t, i @ f_t))
    print(f"bare numpy Fortescue product, V and I, phasors ready: {t_bare:.3f} s")
    print(f"same, starting from the magnitude/angle input arrays: {t_conv:.3f} s")

    print(f"ratio plain loop (subset) / full analysis: {t_loop / t_full:,.0f}x faster (target >= 100x)")
    print(f"ratio per-reading loop (same work) / full analysis: {t_same / t_full:,.0f}x faster (target >= 100x)")
    print(f"ratio full analysis / bare Fortescue (phasors ready): {t_full / t_bare:.1f}x (target <= 3x)")
    print(f"ratio full analysis / Fortescue from input arrays: {t_full / t_conv:.1f}x (target <= 3x)")


if __name__ == "__main__":
    main()
