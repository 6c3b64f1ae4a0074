"""Benchmark of the computation core (not part of the test run).

Runs the full analysis on N random readings and prints readings per second and two ratios measured in
the same run:

* against a plain per-reading Python loop doing the same work (tests/reference_loop.py, cmath/math, which the
  test suite checks against the vectorised results; target: at least 100x faster);
* against the bare numpy Fortescue matrix product on the same voltage and current phasor arrays
  (target: the whole analysis within 3x of it).

The process is set up as the batch commands set it up (fieldpad.commands.batch_memory: glibc keeps freed memory for
reuse).  The full analysis is timed on one thread and on the default number of threads.

Usage: python tests/bench/bench_core.py [N]     (default N = 1,000,000)
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

from fieldpad.commands.batch_memory import keep_freed_memory
from fieldpad.core.analysis import analyze, analyze_block, default_workers
from fieldpad.core.phasors import polar
from fieldpad.core.sequence import FORTESCUE

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
from reference_loop import analyse_one  # noqa: E402  (the same analysis, plain Python, per reading)


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


def best_of(fn, repeat=5):
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    allocator = keep_freed_memory()
    cols, system = random_readings(n)
    workers = default_workers()
    print(f"readings: {n:,}; glibc keeps freed memory: {allocator}; threads: {workers}")

    t_one = best_of(lambda: analyze(cols, system, workers=1))
    print(f"full analysis (numpy, vectorised), 1 thread: {t_one:.3f} s  = {n / t_one:,.0f} readings/s")
    t_full = best_of(lambda: analyze(cols, system, workers=workers))
    print(f"full analysis (numpy, vectorised), {workers} threads: {t_full:.3f} s  = {n / t_full:,.0f} readings/s")

    n_loop = min(n, 20_000)
    keys = list(cols)
    rows = [{k: float(cols[k][i]) for k in keys} for i in range(n_loop)]
    t = time.perf_counter()
    for r in rows:
        analyse_one(r)
    t_loop = (time.perf_counter() - t) * n / n_loop
    print(
        f"plain Python loop doing the same analysis (tests/reference_loop.py; timed on {n_loop:,}, scaled): "
        f"{t_loop:.3f} s  = {n / t_loop:,.0f} readings/s"
    )

    n_same = min(n, 2_000)
    one = [{k: v[i : i + 1] for k, v in cols.items()} for i in range(n_same)]
    t = time.perf_counter()
    for i in range(n_same):
        analyze_block(one[i], system[i : i + 1])
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
    v, i = (
        np.stack([polar(cols[p], cols[p + "_deg"]) for p in ph], axis=-1)
        for ph in (("va", "vb", "vc"), ("ia", "ib", "ic"))
    )
    t_bare = best_of(lambda: (v @ f_t, i @ f_t))
    print(f"bare numpy Fortescue product, V and I, phasors ready: {t_bare:.3f} s")
    print(f"same, starting from the magnitude/angle input arrays: {t_conv:.3f} s")

    # A floor for any full analysis: only writing arrays shaped like its results (one pass each, no arithmetic).
    sample = analyze({k: v[:10] for k, v in cols.items()}, system[:10])
    dtypes = [np.asarray(v).dtype for v in sample.values.values()] + [np.dtype(bool)] * len(sample.findings)

    def write_outputs():
        for dt in dtypes:
            np.full(n, 1, dtype=dt)

    t_floor = best_of(write_outputs)
    print(
        f"writing {len(dtypes)} result arrays of {n:,} (no arithmetic), the least any full analysis does: "
        f"{t_floor:.3f} s = {t_floor / t_bare:.1f}x the bare product"
    )

    print(
        f"ratio plain Python loop / full analysis: {t_loop / t_full:,.0f}x faster (target >= 100x); "
        f"on 1 thread {t_loop / t_one:,.0f}x"
    )
    print(f"ratio per-reading calls of the numpy analysis / full analysis: {t_same / t_full:,.0f}x faster")
    print(f"ratio full analysis / bare Fortescue (phasors ready): {t_full / t_bare:.1f}x (target <= 3x)")
    print(f"ratio full analysis / Fortescue from input arrays: {t_full / t_conv:.1f}x (target <= 3x)")


if __name__ == "__main__":
    main()
