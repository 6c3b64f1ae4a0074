"""``fieldpad merge OTHER.db...``: bring in the records of other laptops' databases."""

from __future__ import annotations

import sys

from ..formats.text import printable
from .common import open_database, report_problems


def run(args) -> int:
    from ..storage.merge import merge_file
    from ..storage.merge_checks import MergeRefused

    db = open_database(args, create=True)
    status = 0
    for other in args.others:
        try:
            rep = merge_file(db, other)
        except MergeRefused as e:
            report_problems(e.problems)
            status = 2
            continue
        words = (
            ("site", "site(s)"),
            ("board", "board(s)"),
            ("round", "round(s)"),
            ("reading", "reading(s) (versions)"),
            ("setting_version", "site/board setting change(s)"),
            ("id_join", "join(s)"),
            ("version_parent", "settled conflict link(s)"),
        )
        added = ", ".join(
            f"{rep.added.get(t, 0)} {w}"
            for t, w in words
            if t in ("site", "board", "round", "reading") or rep.added.get(t)
        )
        print(f"{printable(other)}: added {added}")
        for t, n in rep.updated.items():
            if n:
                print(f"{printable(other)}: updated {n} {t}(s) to the later edit")
        for note in rep.notes:
            print(f"warning: {printable(note)}", file=sys.stderr)
        warn_same_names(rep.same_name_sites, rep.same_name_boards)
        if rep.conflicts:
            print(
                f"warning: {len(rep.conflicts)} reading(s) have competing versions (two laptops changed the "
                "same version); the latest recorded is shown, every version is kept. A supervisor settles "
                "each with: fieldpad settle READING_ID VERSION_ID --reason TEXT ('fieldpad settle' alone "
                "lists them)",
                file=sys.stderr,
            )
    return status


def warn_same_names(site_groups, board_groups) -> None:
    """Same names under different ids: kept apart, listed with their ids and how to join them."""
    for group in site_groups:
        ids = "; ".join(f"{s['id']} ({printable(s['summary'])})" for s in group)
        print(
            f"warning: site {printable(group[0]['name'])} exists under {len(group)} ids: {ids}. They are kept "
            "apart; if they are the same site: fieldpad join-sites KEEP_ID OTHER_ID",
            file=sys.stderr,
        )
    for group in board_groups:
        ids = "; ".join(b["id"] for b in group)
        print(
            f"warning: board {printable(group[0]['site_name'])} / {printable(group[0]['name'])} exists under "
            f"{len(group)} ids: {ids}. They are kept apart; if they are the same board: "
            "fieldpad join-boards KEEP_ID OTHER_ID",
            file=sys.stderr,
        )
