"""``fieldpad merge OTHER.db...``: bring in the records of other laptops' databases."""
from __future__ import annotations

import sys

from ..formats.text import printable
from .common import open_database


def run(args) -> int:
    from ..storage.merge import merge_file

    db = open_database(args, create=True)
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
