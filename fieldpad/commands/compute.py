"""``fieldpad compute``: check every record first, then analyse and write in blocks.

Nothing is written unless every record is usable (bad input: exit status 2, one line per problem on
stderr).  One columnar path: the file is read a block of rows at a time into columns
(:mod:`fieldpad.formats.columns`), each block checked column by column and kept (in memory, or in a
temporary file past a limit); once every block is checked, each is analysed
(:func:`fieldpad.core.analysis.analyze`, which splits a block over its threads) and written as CSV or JSON
straight from the result columns (:mod:`fieldpad.formats.writers`).  Memory is bounded by the block.
"""

from __future__ import annotations

import io
import sys

from .common import MAX_PROBLEMS, report_problems


def check_stream(stream, *, block_rows=None):
    """Read and check a binary stream; returns ``(kind, spool, problem lines, problem count)``.

    Only the first problems are kept as lines (``MAX_PROBLEMS`` of them... and up to 10,000 for scripts);
    the count is of all of them.  Raises :class:`fieldpad.formats.records.InputError` for input that
    cannot be read at all.
    """
    from ..formats.columns import BLOCK_ROWS, Spool, check_block, problem_lines, read_blocks
    from . import nphase

    spool = Spool()
    lines: list = []
    count = 0
    kind = None
    n_phase = None  # (largest number of phases, any currents) for a file of n-phase sets
    for block_kind, raw in read_blocks(stream, block_rows=block_rows or BLOCK_ROWS):
        if kind is None and nphase.is_nphase(raw):
            n_phase = (2, False)
        kind = block_kind
        if n_phase is not None:
            (ni, cols, has_i), problems = nphase.check_block(raw)
        else:
            clean, problems = check_block(raw, board_inputs=True)
        if problems:
            count += len(problems)
            if len(lines) < 10_000:
                lines.extend(problem_lines(raw, problems[: 10_000 - len(lines)]))
            spool.close()
            continue
        if count:
            continue  # nothing will be written: keep nothing
        if n_phase is not None:
            n_phase = (max(n_phase[0], int(ni.max())), n_phase[1] or bool(has_i.any()))
            spool.add((ni, cols, has_i), sum(v.nbytes for v in cols.values()) + 9 * raw.n, raw.n)
            continue
        cols = {k: v for k, v in clean.cols.items() if clean.given[k].any()}
        nbytes = sum(v.nbytes for v in clean.cols.values()) + 2 * clean.n
        spool.add((cols, clean.system, clean.standard), nbytes, clean.n)
    if n_phase is not None:
        kind = (kind, n_phase)
    return kind, spool, lines, count


def check_input(data: bytes):
    """Parse and check bytes; returns ``(kind, spool, problem lines)`` (see :func:`check_stream`)."""
    kind, spool, lines, _count = check_stream(io.BytesIO(data))
    return kind, spool, lines


def write_results(spool, kind: str, fmt: str, out) -> None:
    """Analyse the checked blocks and write the results to ``out`` (a binary stream, or a text stream)."""
    from ..core.analysis import analyze
    from ..core.results import RESULT_FIELDS
    from ..formats.writers import assemble, result_parts_csv, result_parts_json, slices

    write = out.write if not isinstance(out, io.TextIOBase) or not hasattr(out, "buffer") else None
    if write is None:
        out.flush()
        write = out.buffer.write
    elif isinstance(out, io.TextIOBase):

        def write(b, _w=out.write):
            _w(b.decode("utf-8"))

    if isinstance(kind, tuple):  # n-phase sets
        from . import nphase

        (kind, (m, currents)) = kind
        nphase.write(spool, kind, fmt, write, m, currents)
        return
    first = True
    if fmt == "csv":
        write((",".join(RESULT_FIELDS) + "\n").encode())
    elif kind != "json-object":
        write(b"[")
    for cols, system, standard in spool:
        result = analyze(cols, system, standard)
        for lo, hi, part in slices(result):
            n = hi - lo
            if fmt == "csv":
                write(assemble(result_parts_csv(part), n))
                continue
            parts = result_parts_json(part, standards=standard[lo:hi])
            if kind == "json-object":
                write(assemble(parts + [b"\n"], n))
                continue
            body = assemble([b",\n"] + parts, n)
            write(body[1:] if first else body)  # "\n{...},\n{...}" after the opening bracket
            first = False
        del result
    if fmt != "csv" and kind != "json-object":
        write(b"\n]\n")


def run(args) -> int:
    from ..formats.records import InputError
    from .batch_memory import keep_freed_memory

    keep_freed_memory()
    try:
        stream = sys.stdin.buffer if args.file == "-" else open(args.file, "rb")  # noqa: SIM115
    except OSError as e:
        return report_problems([f"{args.file}: {e.strerror}"])
    try:
        with stream if args.file != "-" else _nothing():
            kind, spool, lines, count = check_stream(stream)
    except InputError as e:
        return report_problems([f"{args.file}: {e}"])
    except OSError as e:
        return report_problems([f"{args.file}: {e.strerror}"])
    if count:
        spool.close()
        report_problems(lines[:MAX_PROBLEMS])
        if count > MAX_PROBLEMS:
            print(f"... and {count - MAX_PROBLEMS} more problem(s)", file=sys.stderr)
        return 2
    write_results(spool, kind, args.format, sys.stdout)
    sys.stdout.flush()
    return 0


class _nothing:
    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return False
