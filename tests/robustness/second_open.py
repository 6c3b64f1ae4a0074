"""The second-open scenario: a process that keeps a connection and touches the database file again, while
another process runs a fieldpad command on the same file; the first then saves and is killed.

Usage as a child: python second_open.py DB BOARD_ID N
  opens the database, saves one reading, opens the same database a second time in this process (as the
  app's export does), checks it with check_file, backs it up, closes that second connection, prints "ready",
  waits for a line on stdin, then saves N readings, printing each id once it is committed.

``second_open_test`` runs it as the scenario: child ready -> `fieldpad db info` and `fieldpad db check` in
other processes -> child saves N -> SIGKILL -> count what survived.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve()
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


def child(path: str, board: str, n: int) -> None:
    from fieldpad.storage import versions
    from fieldpad.storage.db import backup, check_file, open_db

    db = open_db(path)
    print(versions.save_reading(db, board, BAL, technician="first").reading_id, flush=True)
    second = open_db(path)
    check_file(path)
    with tempfile.TemporaryDirectory() as d:
        backup(second, Path(d) / "copy.db")
    second.close()
    print("ready", flush=True)
    sys.stdin.readline()
    for k in range(n):
        print(versions.save_reading(db, board, {**BAL, "va": str(270 + k)}, technician="first").reading_id, flush=True)
    print("done", flush=True)
    sys.stdin.readline()  # stay alive, connection open, until killed


def second_open_test(folder: Path, n: int = 5) -> tuple[int, int, list[str]]:
    """Returns (readings reported saved, readings lost, integrity problems)."""
    from fieldpad.storage import sites
    from fieldpad.storage.db import check, open_db

    path = folder / "second-open.db"
    db = open_db(path)
    board = sites.create_board(db, sites.create_site(db, "Second Open Yard"), "DB-2")
    db.close()
    p = subprocess.Popen(
        [sys.executable, str(HERE), str(path), board, str(n)], stdin=subprocess.PIPE, stdout=subprocess.PIPE, text=True
    )
    reported = []
    for line in p.stdout:
        line = line.strip()
        if line == "ready":
            for action in ("info", "check"):
                subprocess.run(
                    [sys.executable, "-m", "fieldpad", "db", action, "--db", str(path)],
                    capture_output=True,
                    timeout=120,
                    check=False,
                )
            p.stdin.write("go\n")
            p.stdin.flush()
        elif line == "done":
            break
        elif line:
            reported.append(line)
    p.send_signal(signal.SIGKILL)
    p.wait()
    # Another process comes and goes after the kill, as a user's next command would.
    subprocess.run(
        [sys.executable, "-m", "fieldpad", "db", "info", "--db", str(path)],
        capture_output=True,
        timeout=120,
        check=False,
    )
    db = open_db(path)
    stored = {r["reading_id"] for r in db.query("SELECT reading_id FROM reading")}
    problems = check(db)
    db.close()
    return len(reported), len(set(reported) - stored), problems


if __name__ == "__main__":
    os.environ.setdefault("PYTHONUNBUFFERED", "1")
    child(sys.argv[1], sys.argv[2], int(sys.argv[3]))
