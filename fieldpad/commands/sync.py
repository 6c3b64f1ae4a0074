"""``fieldpad sync [--server URL] [--db PATH]``: send this laptop's versions the server lacks, bring back
the rest, and say what moved."""

from __future__ import annotations

import sys

from ..storage.server import sync
from ..storage.server_schema import server_url
from .common import open_database


def run(args) -> int:
    url = server_url(args.server)
    db = open_database(args)
    rep = sync(db, url)
    sent = ", ".join(f"{n} {t}(s)" for t, n in rep.sent.items() if n) or "nothing new"
    got = ", ".join(f"{n} {t}(s)" for t, n in rep.received.items() if n) or "nothing new"
    print(f"{rep.server} (as {rep.role}): sent {sent}; received {got}")
    if rep.not_mine:
        print(
            f"{rep.not_mine} reading version(s) on this laptop were recorded by others, not by {rep.role}: "
            "each technician's own laptop sends theirs",
            file=sys.stderr,
        )
    if rep.waiting:
        print(
            f"{rep.waiting} version(s) wait for the version they correct to reach the server (sent by the "
            "technician who recorded it); they go at a later sync",
            file=sys.stderr,
        )
    return 0
