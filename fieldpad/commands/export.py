"""``fieldpad export``: current readings with results and findings as CSV, JSON or the HTML report."""
from __future__ import annotations

import sys
from pathlib import Path

from ..formats.text import printable
from .common import open_database, report_problems


def run(args) -> int:
    from ..report.export import export_records
    from ..storage import sites
    from ..storage.db import resolve_path
    from ..storage.files import atomic_write_text
    from .batch_memory import keep_freed_memory

    keep_freed_memory()

    if args.day:
        import datetime as _dt

        try:
            _dt.date.fromisoformat(args.day)
        except ValueError:
            return report_problems([f"--day: {args.day!r} is not a date (YYYY-MM-DD)"])
    out_path = None
    if args.output and args.output != "-":
        from ..storage.files import check_target

        out_path = args.output
        # Before any work: refuse a FIFO, device or folder, and the database itself or any of its files.
        check_target(Path(out_path), overwrite=True, protect=(resolve_path(args.db),), stdout_hint=True)
    db = open_database(args)
    if args.site and not any(s_["name"] == args.site for s_ in sites.list_sites(db)):
        names = ", ".join(printable(s_["name"]) for s_ in sites.list_sites(db)) or "none"
        return report_problems([f"--site: no site named '{printable(args.site)}' in {resolve_path(args.db)} "
                                 f"(sites: {names}); nothing was written"])
    if args.format in ("csv", "json"):
        # Streamed: a block of readings at a time, whole file or none.
        from ..report.export import write_csv, write_json

        writer = write_csv if args.format == "csv" else write_json

        def fill(f):
            return writer(db, f, day=args.day, site=args.site)

        if out_path:
            from ..storage.files import atomic_write_with

            count = atomic_write_with(out_path, fill, protect=(resolve_path(args.db),))
            print(f"wrote {count} reading(s) to {out_path}", file=sys.stderr)
        else:
            sys.stdout.flush()
            fill(sys.stdout.buffer)
            sys.stdout.buffer.flush()
        return 0
    records = export_records(db, day=args.day, site=args.site)
    from ..report.html import to_html

    text = to_html(db, records, day=args.day, site=args.site)
    if out_path:
        atomic_write_text(out_path, text, protect=(resolve_path(args.db),))
        print(f"wrote {len(records)} reading(s) to {out_path}", file=sys.stderr)
    else:
        sys.stdout.write(text)
    return 0
