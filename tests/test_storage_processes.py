"""Crash safety and concurrent writers, with real processes and a real file.

The robustness run (tests/robustness/run.py) does the same at larger counts.
"""

import random
import subprocess
import sys
from pathlib import Path

from fieldpad.storage.db import open_db

sys.path.insert(0, str(Path(__file__).parent / "robustness"))
from crash import WRITER, kill_test  # noqa: E402
from crash import setup as _setup  # noqa: E402


def test_sigkill_loses_no_committed_reading(tmp_path):
    path = tmp_path / "crash.db"
    board = _setup(path)
    reported, lost, problems = kill_test(path, board, kills=3, rng=random.Random(11))
    assert len(reported) > 0
    assert lost == set()
    assert problems == []


def test_two_writers_at_once(tmp_path):
    path = tmp_path / "busy.db"
    board = _setup(path)
    procs = [
        subprocess.Popen([sys.executable, WRITER, str(path), board, "150"], stdout=subprocess.PIPE, text=True)
        for _ in range(2)
    ]
    outs = [p.communicate(timeout=120)[0] for p in procs]
    lines = [line for out in outs for line in out.splitlines()]
    errors = [line for line in lines if line.startswith("error")]
    assert errors == []
    db = open_db(path)
    assert db["reading"].count == 300 == len(set(lines))
    db.close()


def test_second_open_in_one_process_loses_nothing_when_another_process_comes_and_goes(tmp_path):
    # The scenario of a lost WAL: a process holds a connection and opens, checks and backs up the same file
    # again; `fieldpad db info` and `db check` run in other processes; the first saves 5 more and is killed.
    from second_open import second_open_test

    reported, lost, problems = second_open_test(tmp_path, n=5)
    assert reported == 6
    assert lost == 0
    assert problems == []
