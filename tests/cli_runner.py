"""Run the ``fieldpad`` command line in this process, as a user's shell would see it: exit status,
standard output and standard error.  The same ``main(argv)`` the installed entry point calls; a subprocess
costs most of a second of start-up per call, so only the tests about the process itself (the entry point,
signals, a closed pipe, the time zone of the environment) start one."""

from __future__ import annotations

import io
import subprocess
import sys
from dataclasses import dataclass

from fieldpad.cli import main


@dataclass
class Result:
    returncode: int
    stdout: str | bytes
    stderr: str | bytes


def run_cli(*args, stdin: str | bytes | None = None, text: bool = True) -> Result:
    data = stdin.encode("utf-8") if isinstance(stdin, str) else (stdin or b"")
    out, err = io.BytesIO(), io.BytesIO()
    fake_in = io.TextIOWrapper(io.BytesIO(data), encoding="utf-8")
    fake_out = io.TextIOWrapper(out, encoding="utf-8", newline="", write_through=True)
    fake_err = io.TextIOWrapper(err, encoding="utf-8", newline="", write_through=True)
    saved = sys.stdin, sys.stdout, sys.stderr
    sys.stdin, sys.stdout, sys.stderr = fake_in, fake_out, fake_err
    try:
        try:
            code = main([str(a) for a in args])
        except SystemExit as e:  # argparse: usage errors exit 2, --help exits 0
            code = e.code if isinstance(e.code, int) else (0 if e.code is None else 2)
        fake_out.flush()
        fake_err.flush()
    finally:
        sys.stdin, sys.stdout, sys.stderr = saved
    o, e = out.getvalue(), err.getvalue()
    if text:
        return Result(code, o.decode("utf-8"), e.decode("utf-8"))
    return Result(code, o, e)


def run_cli_process(*args, stdin: str | None = None, env=None, timeout: float = 120):
    """The installed program in a process of its own (``python -m fieldpad``)."""
    return subprocess.run(
        [sys.executable, "-m", "fieldpad", *map(str, args)],
        capture_output=True,
        text=True,
        input=stdin,
        env=env,
        timeout=timeout,
    )
