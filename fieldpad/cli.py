"""The ``fieldpad`` command line: the app by default, and the scripting commands.

Exit status: 0 success, 2 bad input or usage (messages on stderr, one line per
problem, nothing on stdout), 1 any other failure with a one-line message.
"""
from __future__ import annotations

import argparse
import sys

MAX_PROBLEMS = 20


def _report_problems(problems: list[str]) -> int:
    for line in problems[:MAX_PROBLEMS]:
        print(line, file=sys.stderr)
    if len(problems) > MAX_PROBLEMS:
        print(f"... and {len(problems) - MAX_PROBLEMS} more problem(s)", file=sys.stderr)
    return 2


def _read_input(path: str) -> bytes:
    if path == "-":
        return sys.stdin.buffer.read()
    with open(path, "rb") as f:
        return f.read()


def cmd_compute(args) -> int:
    from .core.readings import validate_record
    from .core.results import RESULT_FIELDS, analyze_records
    from .records_io import InputError, extra_columns_problem, parse_records, write_csv, write_json

    try:
        parsed = parse_records(_read_input(args.file))
    except (InputError, OSError) as e:
        return _report_problems([f"{args.file}: {e.strerror if isinstance(e, OSError) else e}"])
    problems, clean = [], []
    for where, rec in parsed.records:
        extra = extra_columns_problem(rec)
        if extra:
            problems.append(f"{where}: {extra[0]}: {extra[1]}")
            continue
        c, probs = validate_record(rec)
        problems.extend(f"{where}: {field}: {reason}" for field, reason in probs)
        clean.append(c)
    if problems:
        return _report_problems(problems)
    results = analyze_records(clean)
    if args.format == "csv":
        sys.stdout.write(write_csv(results, RESULT_FIELDS))
    else:
        sys.stdout.write(write_json(results, single=parsed.kind == "json-object"))
    return 0


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="fieldpad", description="Switchboard readings: entry, checks and records.")
    sub = p.add_subparsers(dest="command")
    c = sub.add_parser("compute", help="analyse readings from a file or stdin; stores nothing")
    c.add_argument("file", nargs="?", default="-", metavar="FILE|-")
    c.add_argument("--format", choices=("json", "csv"), default="json")
    c.set_defaults(func=cmd_compute)
    return p


class _Parser(argparse.ArgumentParser):
    pass


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        print("fieldpad: the entry app is not built yet; try 'fieldpad compute --help'", file=sys.stderr)
        return 1
    try:
        return args.func(args)
    except KeyboardInterrupt:
        return 130
    except BrokenPipeError:
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
