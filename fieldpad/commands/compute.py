"""``fieldpad compute``: check every record first, then analyse and write in blocks.

Nothing is written unless every record is usable (bad input: exit status 2,
one line per problem on stderr).  Results are produced a block at a time so a
large file does not hold every result in memory at once.
"""
from __future__ import annotations

import json
import sys

from ..core.readings import validate_record
from ..core.results import RESULT_FIELDS, analyze_records
from ..formats.records import PROBLEMS_KEY, parse_records, record_problems, write_csv
from .common import read_input, report_problems

BLOCK = 20_000


def check_input(data: bytes):
    """Parse and validate; returns (kind, clean records, problem lines).

    Raises :class:`fieldpad.formats.records.InputError` for input that cannot be read at all.
    """
    parsed = parse_records(data)
    problems, clean = [], []
    for where, rec in parsed.records:
        early = record_problems(rec)
        problems.extend(f"{where}: {f}: {r}" for f, r in early)
        if early and "__extra__" in rec:
            continue
        rec.pop(PROBLEMS_KEY, None)
        c, probs = validate_record(rec, board_inputs=True)
        problems.extend(f"{where}: {field}: {reason}" for field, reason in probs)
        clean.append(c)
    parsed.records = None  # free the raw records before the analysis
    return parsed.kind, clean, problems


def write_results(clean: list[dict], kind: str, fmt: str, out) -> None:
    """Analyse and write results to the text stream ``out`` (JSON or CSV)."""
    if fmt == "csv":
        for start in range(0, len(clean), BLOCK):
            text = write_csv(analyze_records(clean[start:start + BLOCK]), RESULT_FIELDS)
            out.write(text if start == 0 else text.split("\n", 1)[1])
        return
    if kind == "json-object":
        out.write(json.dumps(analyze_records(clean)[0], ensure_ascii=False, indent=2) + "\n")
        return
    out.write("[")
    for start in range(0, len(clean), BLOCK):
        block = analyze_records(clean[start:start + BLOCK])
        body = ",\n".join(json.dumps(r, ensure_ascii=False, indent=2) for r in block)
        out.write(("\n" if start == 0 else ",\n") + body)
    out.write("\n]\n")


def run(args) -> int:
    from ..formats.records import InputError
    from .batch_memory import keep_freed_memory

    keep_freed_memory()

    try:
        kind, clean, problems = check_input(read_input(args.file))
    except (InputError, OSError) as e:
        return report_problems([f"{args.file}: {e.strerror if isinstance(e, OSError) else e}"])
    if problems:
        return report_problems(problems)
    write_results(clean, kind, args.format, sys.stdout)
    return 0
