"""``fieldpad join-sites KEEP_ID OTHER_ID`` and ``fieldpad join-boards KEEP_ID OTHER_ID``: two ids found to be
the same site (or board), usually one created on each laptop.  The join is recorded as a row of its own,
so every laptop that merges this database later joins them the same way; nothing is rewritten."""

from __future__ import annotations

import sys

from ..formats.text import printable
from .common import open_database


def run_sites(args) -> int:
    return _join(args, "site")


def run_boards(args) -> int:
    return _join(args, "board")


def signer(args) -> str | None:
    """Who signs a change made from the command line: --technician, $FIELDPAD_TECHNICIAN, the login name."""
    import getpass
    import os

    try:
        return args.technician or os.environ.get("FIELDPAD_TECHNICIAN") or getpass.getuser()
    except (KeyError, OSError):
        return None


def _join(args, entity: str) -> int:
    from ..storage import settings_history, sites

    db = open_database(args, create=False)
    differ = settings_history.join(db, entity, args.keep_id, args.other_id, by=signer(args), reason=args.reason)
    kept = sites.get_site(db, args.keep_id) if entity == "site" else sites.get_board(db, args.keep_id)
    print(
        f"joined {entity} {args.other_id} into {printable(kept['name'])} ({args.keep_id}): its "
        + ("boards, rounds and readings" if entity == "site" else "readings")
        + " are shown there from now on, and on every laptop that merges this database"
    )
    for f, keep, other in differ:
        print(
            f"check: {f} is {printable(keep)!s} here (kept); the joined {entity} had {printable(other)!s}. "
            f"Its history keeps both; edit the {entity} if the kept value is not the right one",
            file=sys.stderr,
        )
    same = [
        g
        for g in sites.same_name_boards(db)
        if g[0]["site_id"] == (kept["site_id"] if entity == "board" else args.keep_id)
    ]
    for group in same:
        ids = "; ".join(b["id"] for b in group)
        print(
            f"warning: board {printable(group[0]['name'])} now exists under {len(group)} ids on this site: {ids}. "
            "If they are the same board: fieldpad join-boards KEEP_ID OTHER_ID",
            file=sys.stderr,
        )
    return 0
