"""``fieldpad settle``: readings whose versions compete (two laptops changed the same version), and the
supervisor's new version that settles one: ``fieldpad settle READING_ID VERSION_ID --reason TEXT`` makes the
values (or the void) of VERSION_ID current, superseding every competing version; every version stays."""

from __future__ import annotations

from ..formats.text import printable
from .common import open_database, report_problems
from .join import signer


def run(args) -> int:
    from ..storage import versions
    from ..storage.ids import local_text

    db = open_database(args, create=False)
    if not args.reading_id:
        found = versions.conflicts(db)
        if not found:
            print("no reading has competing versions")
        for rid, _heads in found.items():
            print(f"reading {rid}: competing versions (the first is shown as current):")
            for v in versions.history(db, rid):
                if v["is_head"]:
                    what = (
                        "VOID"
                        if v["void"]
                        else ", ".join(f"{k}={printable(x)}" for k, x in versions.inputs_of(v).items())
                    )
                    print(
                        f"  {v['id']}  v{v['version']} recorded {local_text(v['recorded_at'])} by "
                        f"{printable(v['recorded_by']) or '-'}: {printable(v['reason']) or ''} [{what}]"
                    )
        return 0
    if not args.version_id or not args.reason:
        return report_problems(
            [
                "settle: give READING_ID VERSION_ID --reason TEXT (the version whose values "
                "stand, and why); without arguments it lists the competing versions"
            ]
        )
    saved = versions.settle_reading(db, args.reading_id, args.version_id, reason=args.reason, by=signer(args))
    print(
        f"settled reading {args.reading_id}: version {saved.version} ({saved.id}) has the values of "
        f"{args.version_id} and supersedes every competing version"
    )
    return 0
