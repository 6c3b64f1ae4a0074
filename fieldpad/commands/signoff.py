"""``fieldpad signoff``: a supervisor signs off a day or a round of a site (a record of its own)."""

from __future__ import annotations

import sys

from ..formats.text import printable
from .common import open_database, report_problems


def run(args) -> int:
    import datetime as _dt

    from ..storage import rounds, signoffs, sites
    from ..storage.db import resolve_path
    from ..storage.rows import ValidationError

    if args.day is None and args.round is None:
        return report_problems(
            ["signoff: give --day YYYY-MM-DD (the whole day) or --round ID (one round); nothing was signed"]
        )
    if args.day is not None:
        try:
            _dt.date.fromisoformat(args.day)
        except ValueError:
            return report_problems([f"--day: {args.day!r} is not a date (YYYY-MM-DD); nothing was signed"])
    db = open_database(args)
    all_sites = sites.list_sites(db)
    names = ", ".join(printable(s["name"]) for s in all_sites) or "none"
    site = None
    if args.site is not None:
        site = next((s for s in all_sites if s["name"] == args.site), None)
        if site is None:
            return report_problems(
                [
                    f"--site: no site named '{printable(args.site)}' in {resolve_path(args.db)} "
                    f"(sites: {names}); nothing was signed"
                ]
            )
    round_row = None
    if args.round is not None:
        found = rounds.find_round(db, args.round, site["id"] if site else None)
        if args.day is not None and len(found) > 1:
            start, end = signoffs.local_day_range_utc(args.day)
            of_day = {r["id"] for s in {f["site_id"] for f in found} for r in rounds.rounds_of_day(db, s, start, end)}
            found = [f for f in found if f["id"] in of_day]
        if not found:
            return report_problems(
                [
                    f"--round: no round with the id or name '{printable(args.round)}'"
                    + (f" at {printable(site['name'])}" if site else "")
                    + "; nothing was signed"
                ]
            )
        if len(found) > 1:
            return report_problems(
                [
                    f"--round: {len(found)} rounds are named '{printable(args.round)}'; give the "
                    "round's id (or --site, --day) to choose one; nothing was signed"
                ]
            )
        round_row = found[0]
        site = site or sites.get_site(db, round_row["site_id"])
    if site is None:
        if len(all_sites) != 1:
            return report_problems(
                [
                    f"--site: the database holds {len(all_sites)} sites ({names}); say which "
                    "with --site NAME; nothing was signed"
                ]
            )
        site = all_sites[0]
    try:
        sid = signoffs.sign_off(
            db,
            site["id"],
            by=args.by,
            note=args.note,
            day=None if round_row else args.day,
            round_id=round_row["id"] if round_row else None,
        )
    except ValidationError as e:
        return report_problems([f"signoff: {field}: {why}; nothing was signed" for field, why in e.problems])
    so = signoffs.get_signoff(db, sid)
    print(f"{printable(site['name'])}: {printable(signoffs.describe(so))} (sign-off {sid})", file=sys.stderr)
    return 0
