"""``fieldpad export``: current readings with results and findings as CSV, JSON, the HTML report or a workbook."""

from __future__ import annotations

import sys
from pathlib import Path

from ..formats.text import printable
from .common import open_database, open_server_copy, report_problems


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
    if args.format == "xlsx" and (not args.output or args.output == "-"):
        return report_problems(
            [
                "--format xlsx: give the file to write with -o FILE.xlsx (a workbook is not "
                "text for standard output); nothing was written"
            ]
        )
    out_path = None
    if args.output and args.output != "-":
        from ..storage.files import check_target

        out_path = args.output
        # Before any work: refuse a FIFO, device or folder, and the database itself or any of its files.
        check_target(Path(out_path), overwrite=True, protect=(resolve_path(args.db),), stdout_hint=True)
    db = open_server_copy(args.server) if getattr(args, "server", None) else open_database(args)
    site_id = None
    if args.site:
        # By id everywhere: a name is looked up once, here, and two sites of one name are never mixed.
        found = sites.sites_matching(db, args.site)
        if not found:
            names = ", ".join(printable(s_["name"]) for s_ in sites.list_sites(db)) or "none"
            return report_problems(
                [
                    f"--site: no site named '{printable(args.site)}' in {resolve_path(args.db)} "
                    f"(sites: {names}); nothing was written"
                ]
            )
        if len(found) > 1:
            return report_problems(
                [
                    f"--site: {len(found)} sites are named '{printable(args.site)}' (two laptops each created one); "
                    "nothing was written. Give the id with --site ID, or if they are the same site join them first "
                    "(fieldpad join-sites KEEP_ID OTHER_ID):"
                ]
                + [f"  {s_['id']}  {printable(sites.site_summary(db, s_['id']))}" for s_ in found]
            )
        site_id, args.site = found[0]["id"], found[0]["name"]
    if args.format in ("csv", "json"):
        # Streamed: a block of readings at a time, whole file or none.
        from ..report.export import write_csv, write_json

        writer = write_csv if args.format == "csv" else write_json

        def fill(f):
            return writer(db, f, day=args.day, site=args.site, site_id=site_id)

        if out_path:
            from ..storage.files import atomic_write_with

            count = atomic_write_with(out_path, fill, protect=(resolve_path(args.db),))
            print(f"wrote {count} reading(s) to {out_path}", file=sys.stderr)
        else:
            sys.stdout.flush()
            fill(sys.stdout.buffer)
            sys.stdout.buffer.flush()
        return 0
    records = export_records(db, day=args.day, site_id=site_id)
    if args.format == "xlsx":
        from ..report.xlsx import write_xlsx

        write_xlsx(db, records, out_path, day=args.day, site=args.site, protect=(resolve_path(args.db),))
        print(f"wrote {len(records)} reading(s) to {out_path}", file=sys.stderr)
        return 0
    from ..report.html import to_html

    text = to_html(db, records, day=args.day, site=args.site)
    if out_path:
        atomic_write_text(out_path, text, protect=(resolve_path(args.db),))
        print(f"wrote {len(records)} reading(s) to {out_path}", file=sys.stderr)
    else:
        sys.stdout.write(text)
    return 0
