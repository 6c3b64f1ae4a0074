"""``fieldpad import FILE``: readings from CSV or JSON into the database, all or nothing, idempotent."""

from __future__ import annotations

import os
import sys

from ..formats.text import printable
from .common import MAX_PROBLEMS, open_database, report_problems


def _more(count: int, shown: int) -> None:
    if count > shown:
        print(f"... and {count - shown} more problem(s)", file=sys.stderr)


def run(args) -> int:
    from ..formats.records import InputError
    from ..storage.importer import import_stream
    from .batch_memory import keep_freed_memory

    keep_freed_memory()
    try:
        stream = sys.stdin.buffer if args.file == "-" else open(args.file, "rb")  # noqa: SIM115
        size = os.fstat(stream.fileno()).st_size if args.file != "-" else 0
    except OSError as e:
        return report_problems([f"{args.file}: {e.strerror}"])
    db = open_database(args, create=True)
    progress = None
    bar = None
    if sys.stderr.isatty() and size > 1_000_000:
        from rich.progress import Progress

        bar = Progress(transient=True)
        bar.start()
        task = bar.add_task("importing", total=None)

        def progress(done, total):
            bar.update(task, completed=done, total=total)

    try:
        report = import_stream(db, stream, progress)
    except InputError as e:
        return report_problems([f"{args.file}: {e}"])
    finally:
        if bar:
            bar.stop()
        if args.file != "-":
            stream.close()
    if report.problem_count:
        report_problems(report.problems[:MAX_PROBLEMS])
        _more(report.problem_count, min(MAX_PROBLEMS, len(report.problems)))
        print("nothing was imported", file=sys.stderr)
        return 2
    for name in report.sites_created:
        print(f"created site: {name}")
    for name in report.boards_created:
        print(f"created board: {name}")
    for line in report.repeats[:MAX_PROBLEMS]:
        print(printable(line), file=sys.stderr)
    if report.repeat_count > MAX_PROBLEMS:
        print(f"... and {report.repeat_count - MAX_PROBLEMS} more reading(s) already stored", file=sys.stderr)
    line = f"imported {report.readings} reading(s)"
    if report.already:
        line += f"; {report.already} already in the database (same reading id), not imported again"
    if report.repeat_count:
        line += f"; {report.repeat_count} repeating a stored reading (same board, time and values), skipped"
    print(line)
    return 0
