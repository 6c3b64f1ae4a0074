"""``fieldpad`` / ``fieldpad app`` / ``fieldpad demo``: the entry app."""

from __future__ import annotations


def run(args) -> int:
    from ..ui.app import run_app

    return run_app(args.db, demo=False, technician=args.technician, server=getattr(args, "server", None))


def run_demo(args) -> int:
    from ..ui.app import run_app

    return run_app(args.db, demo=True, technician=args.technician, server=getattr(args, "server", None))
