"""The allocator setting the batch commands use (fieldpad.commands.batch_memory)."""

import ctypes.util
import subprocess
import sys

import pytest

from fieldpad.core.analysis import analyze, analyze_block


def test_setting_is_taken_on_glibc_and_results_do_not_change():
    # Run in a child process: the setting is process-wide and must not leak into other tests.
    code = (
        "import numpy as np\n"
        "from fieldpad.commands.batch_memory import keep_freed_memory\n"
        "from fieldpad.core.analysis import analyze\n"
        "rng = np.random.default_rng(5); n = 70_000\n"
        "cols = {p: 277 * (1 + 0.02 * rng.standard_normal(n)) for p in ('va', 'vb', 'vc')}\n"
        "cols.update({p + '_deg': b + rng.standard_normal(n) for p, b in (('va', 0), ('vb', -120), ('vc', 120))})\n"
        "before = analyze(cols, np.zeros(n, np.int8), workers=1).values\n"
        "took = keep_freed_memory()\n"
        "after = analyze(cols, np.zeros(n, np.int8), workers=2).values\n"
        "same = all(np.array_equal(before[k], after[k], equal_nan=True) for k in before)\n"
        "print(took, keep_freed_memory(), same)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.split()
    if ctypes.util.find_library("c") and sys.platform.startswith("linux"):
        assert out[0] == "True"
    assert out[1] == out[0]  # asking twice changes nothing
    assert out[2] == "True"


@pytest.mark.parametrize("workers", [1, 2])
def test_threads_give_the_one_block_result(workers, monkeypatch):
    import numpy as np

    import fieldpad.core.analysis as an

    rng = np.random.default_rng(9)
    n = 1000
    cols = {p: 100 * rng.random(n) for p in ("ia", "ib", "ic")}
    cols.update({p + "_deg": 360 * rng.random(n) - 180 for p in ("ia", "ib", "ic")})
    cols.update({p: 277 * (1 + 0.1 * rng.standard_normal(n)) for p in ("va", "vb", "vc")})
    cols.update({p + "_deg": b + 5 * rng.standard_normal(n) for p, b in (("va", 0), ("vb", -120), ("vc", 120))})
    system = rng.integers(0, 4, n).astype(np.int8)
    whole = analyze_block(cols, system)
    monkeypatch.setattr(an, "BLOCK", 64)
    split = analyze(cols, system, workers=workers)
    for k, v in whole.values.items():
        np.testing.assert_array_equal(split.values[k], v, err_msg=k)
