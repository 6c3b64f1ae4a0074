"""``fieldpad server init [--server URL]``: create or upgrade the crew's central schema (PostgreSQL)."""

from __future__ import annotations

from ..storage.server_schema import init, server_url, shown_url


def run(args) -> int:
    url = server_url(args.server)
    done, before = init(url)
    if done:
        print(
            f"{shown_url(url)}: applied {', '.join(done)}"
            + (f" (already there: {', '.join(before)})" if before else "")
        )
    else:
        print(f"{shown_url(url)}: schema up to date ({before[-1] if before else 'none'})")
    return 0
