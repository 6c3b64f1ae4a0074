"""``fieldpad import FILE``: readings from CSV or JSON into the database, all or nothing."""
from __future__ import annotations

import sys

from .common import open_database, read_input, report_problems


def run(args) -> int:
    from ..formats.records import InputError
    from ..storage.importer import import_bytes

    try:
        data = read_input(args.file)
    except OSError as e:
        return report_problems([f"{args.file}: {e.strerror}"])
    db = open_database(args, create=True)
    progress = None
    bar = None
    if sys.stderr.isatty() and len(data) > 1_000_000:
        from rich.progress import Progress

        bar = Progress(transient=True)
        bar.start()
        task = bar.add_task("importing", total=None)

        def progress(done, total):
            bar.update(task, completed=done, total=total)
    try:
        report = import_bytes(db, data, progress)
    except InputError as e:
        return report_problems([f"{args.file}: {e}"])
    finally:
        if bar:
            bar.stop()
    if report.problems:
        report_problems(report.problems)
        print("nothing was imported", file=sys.stderr)
        return 2
    for name in report.sites_created:
        print(f"created site: {name}")
    for name in report.boards_created:
        print(f"created board: {name}")
    print(f"imported {report.readings} reading(s)")
    return 0
