"""Process set-up for large batches of readings: keep freed memory for reuse.

The vectorised analysis (:mod:`fieldpad.core.analysis`) works in blocks and
makes a few hundred short-lived arrays per block.  With glibc's default
settings each of those arrays of 128 KiB or more is a fresh ``mmap`` (and the
heap is trimmed back to the system after every block), so every block pays
the kernel again for zeroed pages: on the 2-core machine the project is
benchmarked on, that was about half of the analysis time.  Raising the two
thresholds lets the allocator reuse the memory instead.  It is a process-wide
setting, so the core never calls this; the batch commands and the benchmark
do.  On other C libraries it does nothing.
"""

from __future__ import annotations

import ctypes
import ctypes.util

#: mallopt parameter numbers from glibc's <malloc.h>.
M_TRIM_THRESHOLD = -1
M_MMAP_THRESHOLD = -3
#: Largest value glibc accepts for M_MMAP_THRESHOLD on 64-bit systems (32 MiB).
MMAP_THRESHOLD_BYTES = 32 * 1024 * 1024
#: Freed memory kept before the heap is given back to the system (256 MiB).
TRIM_THRESHOLD_BYTES = 256 * 1024 * 1024

_done: bool | None = None


def keep_freed_memory() -> bool:
    """Raise glibc's mmap and trim thresholds once per process.

    Returns True when the allocator took the settings, False where the C
    library is not glibc (nothing is changed then).
    """
    global _done
    if _done is None:
        _done = False
        try:
            libc = ctypes.CDLL(ctypes.util.find_library("c") or None)
            mallopt = libc.mallopt
            gnu_version = libc.gnu_get_libc_version  # glibc only
        except (OSError, AttributeError):
            return False
        del gnu_version
        mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
        mallopt.restype = ctypes.c_int
        _done = bool(
            mallopt(M_MMAP_THRESHOLD, MMAP_THRESHOLD_BYTES) and mallopt(M_TRIM_THRESHOLD, TRIM_THRESHOLD_BYTES)
        )
    return _done
