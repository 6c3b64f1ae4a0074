"""A writer process for crash and concurrency tests.

Usage: python writer.py DB BOARD_ID N [SECONDS]
Saves up to N readings (for at most SECONDS if given) and prints each reading id
on its own line once it is committed, flushing at once, so the parent knows
exactly what was reported saved.  Prints "error: ..." for any error.
"""

import sys
import time

from fieldpad.storage import versions
from fieldpad.storage.db import open_db

BAL = {
    "va": "277",
    "vb": "277",
    "vc": "277",
    "va_deg": "0",
    "vb_deg": "-120",
    "vc_deg": "120",
    "ia": "100",
    "ib": "100",
    "ic": "100",
    "ia_deg": "-30",
    "ib_deg": "-150",
    "ic_deg": "90",
}


def main():
    path, board, n = sys.argv[1], sys.argv[2], int(sys.argv[3])
    end = time.time() + float(sys.argv[4]) if len(sys.argv) > 4 else float("inf")
    db = open_db(path)
    for k in range(n):
        if time.time() > end:
            break
        try:
            s = versions.save_reading(
                db, board, {**BAL, "va": str(270 + k % 10)}, technician="writer", note=f"loop {k}"
            )
        except Exception as e:  # report, never hide: the parent counts these
            print(f"error: {type(e).__name__}: {e}", flush=True)
            continue
        print(s.reading_id, flush=True)


if __name__ == "__main__":
    main()
