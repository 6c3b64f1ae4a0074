"""The ``fieldpad`` command line: argument parsing for the app (the default) and the scripting commands.

Each command is one module under ``fieldpad/commands/`` with a ``run(args)``; exit status: 0 success,
2 bad input or usage (messages on stderr, one line per problem, nothing on stdout), 1 any other failure
with a one-line message.
"""

from __future__ import annotations

import argparse
import contextlib
import os
import sqlite3
import sys

from .formats.text import printable


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="fieldpad",
        description="Switchboard readings: entry, checks and records. Run without a command to open the entry app.",
    )
    p.add_argument("--db", metavar="PATH", help="database file (default: $FIELDPAD_DB or the user data folder)")
    p.add_argument(
        "--technician",
        metavar="NAME",
        help="name that signs the readings (default: $FIELDPAD_TECHNICIAN, else your login name)",
    )
    p.add_argument(
        "--server", metavar="URL", help="the crew's central server for the app's sync key (default: $FIELDPAD_SERVER)"
    )
    p.set_defaults(command_module="app")
    sub = p.add_subparsers(dest="command")
    db_opt = argparse.ArgumentParser(add_help=False)
    db_opt.add_argument(
        "--db",
        metavar="PATH",
        default=argparse.SUPPRESS,
        help="database file (default: $FIELDPAD_DB or the user data folder)",
    )

    c = sub.add_parser("compute", help="analyse readings from a file or stdin; stores nothing")
    c.add_argument("file", nargs="?", default="-", metavar="FILE|-")
    c.add_argument("--format", choices=("json", "csv"), default="json")
    c.set_defaults(command_module="compute")

    i = sub.add_parser("import", parents=[db_opt], help="import readings from CSV or JSON (all or nothing)")
    i.add_argument("file", metavar="FILE")
    i.set_defaults(command_module="import_file")

    e = sub.add_parser("export", parents=[db_opt], help="current readings with results and findings")
    e.add_argument("--day", metavar="YYYY-MM-DD", help="readings taken on this local day")
    e.add_argument("--site", metavar="NAME|ID", help="one site, by name or (where two share a name) by id")
    e.add_argument("--format", choices=("csv", "json", "html", "xlsx"), required=True)
    e.add_argument("-o", "--output", metavar="FILE", help="write to FILE (default: standard output; xlsx needs a FILE)")
    e.add_argument(
        "--server",
        metavar="URL",
        help="export the crew's records from this PostgreSQL server instead of this laptop's database",
    )
    e.set_defaults(command_module="export")

    so = sub.add_parser("signoff", parents=[db_opt], help="sign off a day or a round (a record of its own)")
    so.add_argument(
        "--day",
        metavar="YYYY-MM-DD",
        help="the local day to sign off (with --round: narrows the round's name to that day's rounds)",
    )
    so.add_argument("--round", metavar="ID", help="the round to sign off: its id, or its name exactly")
    so.add_argument("--by", metavar="NAME", required=True, help="the supervisor's name")
    so.add_argument("--note", metavar="TEXT")
    so.add_argument("--site", metavar="NAME", help="the site (needed when the database holds several)")
    so.set_defaults(command_module="signoff")

    m = sub.add_parser("merge", parents=[db_opt], help="bring in the records of other fieldpad databases")
    m.add_argument("others", nargs="+", metavar="OTHER.db")
    m.set_defaults(command_module="merge")

    srv = argparse.ArgumentParser(add_help=False)
    srv.add_argument(
        "--server",
        metavar="URL",
        help="the crew's PostgreSQL server, a libpq connection URI "
        "(default: $FIELDPAD_SERVER); passwords come from libpq's password file or environment",
    )

    sv = sub.add_parser("server", help="the crew's central PostgreSQL server")
    sv_sub = sv.add_subparsers(dest="server_action", required=True)
    sv_init = sv_sub.add_parser("init", parents=[srv], help="create or upgrade the central schema")
    sv_init.set_defaults(command_module="server")

    sy = sub.add_parser(
        "sync", parents=[db_opt, srv], help="send this laptop's records to the crew's server and bring back the rest"
    )
    sy.set_defaults(command_module="sync")

    for name, what, fn in (("join-sites", "site", "run_sites"), ("join-boards", "board", "run_boards")):
        j = sub.add_parser(
            name,
            parents=[db_opt, who_opt()],
            help=f"two {what} ids are the same {what}: show OTHER_ID as KEEP_ID (recorded, merged)",
        )
        j.add_argument("keep_id", metavar="KEEP_ID")
        j.add_argument("other_id", metavar="OTHER_ID")
        j.add_argument("--reason", metavar="TEXT")
        j.set_defaults(command_module=f"join:{fn}")
    st_ = sub.add_parser(
        "settle",
        parents=[db_opt, who_opt()],
        help="list readings whose versions compete, or settle one with a new version",
    )
    st_.add_argument("reading_id", nargs="?", metavar="READING_ID")
    st_.add_argument("version_id", nargs="?", metavar="VERSION_ID", help="the version whose values stand")
    st_.add_argument("--reason", metavar="TEXT")
    st_.set_defaults(command_module="settle")

    d = sub.add_parser("db", parents=[db_opt], help="database check, backup and info")
    d.add_argument("action", choices=("check", "backup", "info"))
    d.add_argument("dest", nargs="?", metavar="DEST")
    d.set_defaults(command_module="db")

    who = argparse.ArgumentParser(add_help=False)
    who.add_argument(
        "--technician",
        metavar="NAME",
        default=argparse.SUPPRESS,
        help="name that signs the readings (default: $FIELDPAD_TECHNICIAN, else your login name)",
    )
    app_srv = argparse.ArgumentParser(add_help=False)
    app_srv.add_argument(
        "--server",
        metavar="URL",
        default=argparse.SUPPRESS,
        help="the crew's central server for the app's sync key (default: $FIELDPAD_SERVER)",
    )
    a = sub.add_parser("app", parents=[db_opt, who, app_srv], help="open the entry app (the default)")
    a.set_defaults(command_module="app")
    dm = sub.add_parser(
        "demo", parents=[db_opt, who, app_srv], help="open the app on a fresh copy of the invented demo site (own file)"
    )
    dm.set_defaults(command_module="app:run_demo")
    return p


def who_opt() -> argparse.ArgumentParser:
    who = argparse.ArgumentParser(add_help=False)
    who.add_argument(
        "--technician",
        metavar="NAME",
        default=argparse.SUPPRESS,
        help="name that signs the change (default: $FIELDPAD_TECHNICIAN, else your login name)",
    )
    return who


def main(argv=None) -> int:
    from .storage.db import StorageError

    parser = build_parser()
    args = parser.parse_args(argv)
    if not hasattr(args, "db"):
        args.db = None
    if not hasattr(args, "technician"):
        args.technician = None
    try:
        return _run(args)
    except BrokenPipeError:
        # The reader of our output went away (``fieldpad compute big.json | head -1``): not an error.
        # Point stdout at /dev/null so Python's own flush at exit does not complain again.
        with contextlib.suppress(OSError):
            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except StorageError as e:
        print(f"fieldpad: {printable(e)}", file=sys.stderr)
        return 1
    except sqlite3.DatabaseError as e:
        print(
            f"fieldpad: the database cannot be read ({e}). Nothing was changed. Run 'fieldpad db check', "
            "and restore a backup if it is damaged.",
            file=sys.stderr,
        )
        return 1
    except OSError as e:
        print(f"fieldpad: {printable(e.filename or '')}: {e.strerror or e}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        return 130


def _run(args) -> int:
    """Import the command's module only now (the app's start-up loads none of the batch commands)."""
    import importlib

    from .commands.common import close_opened

    module, _, func = args.command_module.partition(":")
    try:
        return getattr(importlib.import_module(f"fieldpad.commands.{module}"), func or "run")(args)
    finally:
        close_opened()


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
