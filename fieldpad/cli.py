"""The ``fieldpad`` command line: the app by default, and the scripting commands.

Exit status: 0 success, 2 bad input or usage (messages on stderr, one line per
problem, nothing on stdout), 1 any other failure with a one-line message.
"""
from __future__ import annotations

import argparse
import contextlib
import os
import sqlite3
import sys
from pathlib import Path

from .formats.text import printable

MAX_PROBLEMS = 20
_OPENED: list = []  # databases a command opened: main() closes them, so the WAL is folded back and removed


def _report_problems(problems: list[str]) -> int:
    for line in problems[:MAX_PROBLEMS]:
        print(printable(line), file=sys.stderr)
    if len(problems) > MAX_PROBLEMS:
        print(f"... and {len(problems) - MAX_PROBLEMS} more problem(s)", file=sys.stderr)
    return 2


def _read_input(path: str) -> bytes:
    if path == "-":
        return sys.stdin.buffer.read()
    with open(path, "rb") as f:
        return f.read()


def cmd_compute(args) -> int:
    from .commands.batch_memory import keep_freed_memory
    from .commands.compute import check_input, write_results
    from .formats.records import InputError

    keep_freed_memory()

    try:
        kind, clean, problems = check_input(_read_input(args.file))
    except (InputError, OSError) as e:
        return _report_problems([f"{args.file}: {e.strerror if isinstance(e, OSError) else e}"])
    if problems:
        return _report_problems(problems)
    write_results(clean, kind, args.format, sys.stdout)
    return 0


def _open(args, *, create: bool = False):
    """The database named by --db (or the default).  Commands that only read refuse a path where no
    database exists; ``import`` and ``merge`` (which write) may start one, and say so on stderr."""
    from .storage.db import open_db, resolve_path

    path = resolve_path(args.db)
    new = create and not path.exists()
    db = open_db(path, create=create)
    _OPENED.append(db)  # closed by main() when the command ends
    if new:
        print(f"created a new database at {path}", file=sys.stderr)
    return db


def cmd_import(args) -> int:
    from .formats.records import InputError
    from .storage.importer import import_bytes

    try:
        data = _read_input(args.file)
    except OSError as e:
        return _report_problems([f"{args.file}: {e.strerror}"])
    db = _open(args, create=True)
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
        return _report_problems([f"{args.file}: {e}"])
    finally:
        if bar:
            bar.stop()
    if report.problems:
        _report_problems(report.problems)
        print("nothing was imported", file=sys.stderr)
        return 2
    for name in report.sites_created:
        print(f"created site: {name}")
    for name in report.boards_created:
        print(f"created board: {name}")
    print(f"imported {report.readings} reading(s)")
    return 0


def cmd_export(args) -> int:
    from .commands.batch_memory import keep_freed_memory
    from .report.export import export_records, to_csv, to_json
    from .storage import repo
    from .storage.db import resolve_path
    from .storage.files import atomic_write_text

    keep_freed_memory()

    if args.day:
        import datetime as _dt

        try:
            _dt.date.fromisoformat(args.day)
        except ValueError:
            return _report_problems([f"--day: {args.day!r} is not a date (YYYY-MM-DD)"])
    out_path = None
    if args.output and args.output != "-":
        from .storage.files import check_target

        out_path = args.output
        # Before any work: refuse a FIFO, device or folder, and the database itself or any of its files.
        check_target(Path(out_path), overwrite=True, protect=(resolve_path(args.db),), stdout_hint=True)
    db = _open(args)
    if args.site and not any(s_["name"] == args.site for s_ in repo.list_sites(db)):
        names = ", ".join(printable(s_["name"]) for s_ in repo.list_sites(db)) or "none"
        return _report_problems([f"--site: no site named '{printable(args.site)}' in {resolve_path(args.db)} "
                                 f"(sites: {names}); nothing was written"])
    records = export_records(db, day=args.day, site=args.site)
    if args.format == "csv":
        text = to_csv(records)
    elif args.format == "json":
        text = to_json(records, day=args.day, site=args.site)
    else:
        from .report.html import to_html

        text = to_html(db, records, day=args.day, site=args.site)
    if out_path:
        atomic_write_text(out_path, text, protect=(resolve_path(args.db),))
        print(f"wrote {len(records)} reading(s) to {out_path}", file=sys.stderr)
    else:
        sys.stdout.write(text)
    return 0


def cmd_merge(args) -> int:
    from .storage.merge import merge_file

    db = _open(args, create=True)
    for other in args.others:
        rep = merge_file(db, other)
        added = ", ".join(f"{n} {t}(s)" for t, n in rep.added.items())
        print(f"{other}: added {added}")
        for t, n in rep.updated.items():
            if n:
                print(f"{other}: updated {n} {t}(s) to the later edit")
        for b in map(printable, rep.same_name_boards):
            print(f"warning: board {b} exists under different ids (two laptops created it); "
                  "both are kept, check which is which", file=sys.stderr)
        for s_ in map(printable, rep.same_name_sites):
            print(f"warning: site {s_} exists under different ids; both are kept", file=sys.stderr)
    return 0


def cmd_db(args) -> int:
    from .storage import repo
    from .storage.db import backup, resolve_path

    if args.action == "check":
        from .storage.access import unwritable_reason
        from .storage.db import check_file

        path = resolve_path(args.db)
        problems = check_file(path)
        if problems:
            for p in problems[:MAX_PROBLEMS]:
                print(f"problem: {printable(p)}")
            print(f"{path}: damaged or not a fieldpad database. Nothing was changed; keep this file, and "
                  "restore the latest backup beside it (the .bak files, or one made with 'fieldpad db backup').")
            return 1
        reason = unwritable_reason(path)
        if reason:
            print(f"{path}: healthy (integrity and foreign keys), but it cannot be written: {reason}. "
                  "Nothing is damaged and nothing needs restoring: every reading can be looked at and "
                  "exported; to add readings make it writable, or copy it to a writable place with "
                  f"'fieldpad db backup DEST --db {path}' and open the copy.")
            return 0
        print(f"{path}: ok (integrity and foreign keys)")
        return 0
    db = _open(args)
    if args.action == "backup":
        if not args.dest:
            return _report_problems(["db backup: DEST is required"])
        print(f"backup written to {backup(db, args.dest)}")
        return 0
    from .storage.db import applied_versions, schema_version_names

    applied = applied_versions(db)
    print(f"database: {resolve_path(args.db)}")
    print(f"schema: {applied[-1] if applied else 'none'} (this fieldpad knows up to {schema_version_names()[-1]})")
    if db.read_only:
        print(f"writable: no ({db.read_only_reason})")
    for k, v in repo.counts(db).items():
        print(f"{k}: {v}")
    return 0


def cmd_app(args) -> int:
    from .ui.app import run_app

    return run_app(args.db, demo=False, technician=args.technician)


def cmd_demo(args) -> int:
    from .ui.app import run_app

    return run_app(args.db, demo=True, technician=args.technician)


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="fieldpad", description="Switchboard readings: entry, checks and records. "
                                "Run without a command to open the entry app.")
    p.add_argument("--db", metavar="PATH", help="database file (default: $FIELDPAD_DB or the user data folder)")
    p.add_argument("--technician", metavar="NAME",
                   help="name that signs the readings (default: $FIELDPAD_TECHNICIAN, else your login name)")
    p.set_defaults(func=cmd_app)
    sub = p.add_subparsers(dest="command")
    db_opt = argparse.ArgumentParser(add_help=False)
    db_opt.add_argument("--db", metavar="PATH", default=argparse.SUPPRESS,
                        help="database file (default: $FIELDPAD_DB or the user data folder)")

    c = sub.add_parser("compute", help="analyse readings from a file or stdin; stores nothing")
    c.add_argument("file", nargs="?", default="-", metavar="FILE|-")
    c.add_argument("--format", choices=("json", "csv"), default="json")
    c.set_defaults(func=cmd_compute)

    i = sub.add_parser("import", parents=[db_opt], help="import readings from CSV or JSON (all or nothing)")
    i.add_argument("file", metavar="FILE")
    i.set_defaults(func=cmd_import)

    e = sub.add_parser("export", parents=[db_opt], help="current readings with results and findings")
    e.add_argument("--day", metavar="YYYY-MM-DD", help="readings taken on this local day")
    e.add_argument("--site", metavar="NAME")
    e.add_argument("--format", choices=("csv", "json", "html"), required=True)
    e.add_argument("-o", "--output", metavar="FILE", help="write to FILE (default: standard output)")
    e.set_defaults(func=cmd_export)

    m = sub.add_parser("merge", parents=[db_opt], help="bring in the records of other fieldpad databases")
    m.add_argument("others", nargs="+", metavar="OTHER.db")
    m.set_defaults(func=cmd_merge)

    d = sub.add_parser("db", parents=[db_opt], help="database check, backup and info")
    d.add_argument("action", choices=("check", "backup", "info"))
    d.add_argument("dest", nargs="?", metavar="DEST")
    d.set_defaults(func=cmd_db)

    who = argparse.ArgumentParser(add_help=False)
    who.add_argument("--technician", metavar="NAME", default=argparse.SUPPRESS,
                     help="name that signs the readings (default: $FIELDPAD_TECHNICIAN, else your login name)")
    a = sub.add_parser("app", parents=[db_opt, who], help="open the entry app (the default)")
    a.set_defaults(func=cmd_app)
    dm = sub.add_parser("demo", parents=[db_opt, who],
                        help="open the app on a fresh copy of the invented demo site (own file)")
    dm.set_defaults(func=cmd_demo)
    return p


def main(argv=None) -> int:
    from .storage.db import StorageError

    parser = build_parser()
    args = parser.parse_args(argv)
    if not hasattr(args, "db"):
        args.db = None
    if not hasattr(args, "technician"):
        args.technician = None
    try:
        return _run(args)
    except BrokenPipeError:
        # The reader of our output went away (``fieldpad compute big.json | head -1``): not an error.
        # Point stdout at /dev/null so Python's own flush at exit does not complain again.
        with contextlib.suppress(OSError):
            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except StorageError as e:
        print(f"fieldpad: {printable(e)}", file=sys.stderr)
        return 1
    except sqlite3.DatabaseError as e:
        print(f"fieldpad: the database cannot be read ({e}). Nothing was changed. Run 'fieldpad db check', "
              "and restore a backup if it is damaged.", file=sys.stderr)
        return 1
    except OSError as e:
        print(f"fieldpad: {printable(e.filename or '')}: {e.strerror or e}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        return 130


def _run(args) -> int:
    try:
        return args.func(args)
    finally:
        while _OPENED:
            with contextlib.suppress(Exception):
                _OPENED.pop().close()


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
