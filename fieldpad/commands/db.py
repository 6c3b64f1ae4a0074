"""``fieldpad db check|backup|info``."""

from __future__ import annotations

from ..formats.text import printable
from .common import MAX_PROBLEMS, open_database, report_problems


def run(args) -> int:
    from ..storage import versions
    from ..storage.db import backup, resolve_path

    if args.action == "check":
        from ..storage.access import unwritable_reason
        from ..storage.db import check_file

        path = resolve_path(args.db)
        problems = check_file(path)
        if problems:
            for p in problems[:MAX_PROBLEMS]:
                print(f"problem: {printable(p)}")
            print(
                f"{path}: damaged or not a fieldpad database. Nothing was changed; keep this file, and "
                "restore the latest backup beside it (the .bak files, or one made with 'fieldpad db backup')."
            )
            return 1
        reason = unwritable_reason(path)
        if reason:
            print(
                f"{path}: healthy (integrity and foreign keys), but it cannot be written: {reason}. "
                "Nothing is damaged and nothing needs restoring: every reading can be looked at and "
                "exported; to add readings make it writable, or copy it to a writable place with "
                f"'fieldpad db backup DEST --db {path}' and open the copy."
            )
            return 0
        print(f"{path}: ok (integrity and foreign keys)")
        return 0
    db = open_database(args)
    if args.action == "backup":
        if not args.dest:
            return report_problems(["db backup: DEST is required"])
        print(f"backup written to {backup(db, args.dest)}")
        return 0
    from ..storage.db import applied_versions, schema_version_names

    applied = applied_versions(db)
    print(f"database: {resolve_path(args.db)}")
    print(f"schema: {applied[-1] if applied else 'none'} (this fieldpad knows up to {schema_version_names()[-1]})")
    if db.read_only:
        print(f"writable: no ({db.read_only_reason})")
    for k, v in versions.counts(db).items():
        print(f"{k}: {v}")
    from ..storage.server import last_sync, pending_count

    last = last_sync(db)
    if last:
        print(
            f"last sync: {last['synced_at']} with {printable(last['server'])} (sent {last['sent']}, "
            f"received {last['received']})"
        )
        waiting = pending_count(db, None, any_author=True)
        print(f"versions not yet sent: {waiting}")
    return 0
