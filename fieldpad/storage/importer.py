"""``fieldpad import``: readings from a CSV or JSON file, all or nothing, idempotent.

Each record has the reading fields of ``fieldpad compute`` plus ``site``,
``board`` and ``taken_at`` (required), and ``technician``, ``round``,
``instrument`` and ``note``.  The columns that ``fieldpad export`` adds
(results, findings, times) are read past, so an export can be imported again.
If any record is bad nothing is imported.

Importing twice adds nothing twice: a record that carries a ``reading_id`` (every export does) that the
database already holds is counted as already there and skipped; a record without one that repeats a
reading already stored (same board, time and values), or an earlier record of the same file, is reported
and skipped.  A record with a ``reading_id`` the database does not hold is stored under that id (and its
``version_id`` and ``version`` when given), so the same reading has the same id in every database.

The file is read and checked a block of rows at a time (:mod:`fieldpad.formats.columns`) and the rows to
store are kept aside (memory bounded by a block); only then is the write lock taken, for one transaction
that stores them in batches.
"""

from __future__ import annotations

import io
import json
import re
import uuid
from dataclasses import dataclass, field

import numpy as np

from ..core.fields import NUMERIC_FIELDS, SYSTEMS
from ..core.readings import stored_text, validate_record
from ..core.results import RESULT_FIELDS
from ..formats.records import formula_unguard
from . import sites
from .db import write
from .ids import parse_time, utc_now, uuid7

META = ("site", "board", "taken_at", "technician", "round", "instrument", "note")
#: Identity columns of an export: kept on import (see the module docstring).
IDS = ("reading_id", "version", "version_id")
#: Export-only columns, read past on import.
EXPORT_ONLY = ("reason", "recorded_at", "taken_at_local") + tuple(RESULT_FIELDS)
TEXT_LIMITS = {"site": 200, "board": 200, "technician": 200, "round": 200, "instrument": 200, "note": 10_000}
#: Rows stored per INSERT batch inside the one transaction.
BATCH = 20_000
#: Rows read and checked at a time (no analysis here, so no need for the analysis's thread-sized blocks).
IMPORT_ROWS = 16_384
_SYSTEM_NAME = {v: k for k, v in SYSTEMS.items()}
_STD_NAME = {0: "ansi", 1: "iec"}
_UTC_Z = re.compile(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(?:\.\d{1,6})?Z")


@dataclass
class ImportReport:
    readings: int = 0
    sites_created: list = field(default_factory=list)
    boards_created: list = field(default_factory=list)
    problems: list = field(default_factory=list)  # "where: field: reason"
    problem_count: int = 0
    already: int = 0  # records whose reading id the database (or the file, earlier) already holds
    repeats: list = field(default_factory=list)  # "where: repeats ..." for records without an id
    repeat_count: int = 0


def import_bytes(db, data: bytes, progress=None) -> ImportReport:
    """:func:`import_stream` of bytes."""
    return import_stream(db, io.BytesIO(data), progress)


def _text_cells(values, name):
    """stored_text of each cell (export's formula guard undone); (texts, problems by row)."""
    cache: dict = {}
    out, problems = [], {}
    limit = TEXT_LIMITS.get(name, 10_000)
    for i, v in enumerate(values):
        key = v if isinstance(v, str) or v is None else (type(v), repr(v))
        got = cache.get(key)
        if got is None:
            got = cache[key] = stored_text(formula_unguard(v), limit)
        text, why = got
        if why:
            problems[i] = why
        out.append(text)
    return out, problems


def _times(values):
    """Stored UTC text of each ``taken_at``: plain UTC times at once, others by :func:`parse_time`.
    (texts, problems by row)."""
    out: list = [None] * len(values)
    problems = {}
    fast_idx, fast_txt = [], []
    for i, v in enumerate(values):
        if v is None:
            continue
        if _UTC_Z.fullmatch(v):
            fast_idx.append(i)
            fast_txt.append(v[:-1])
            continue
        try:
            out[i] = parse_time(v)
        except ValueError as e:
            problems[i] = str(e)
    if fast_idx:
        try:
            t = np.array(fast_txt, dtype="datetime64[us]")
        except ValueError:  # e.g. month 13: each on its own, for its message
            t = None
        if t is not None:
            years = t.astype("datetime64[Y]").astype(np.int64) + 1970
            texts = np.char.add(np.datetime_as_string(t, unit="us"), "Z").tolist()
            for i, y, s in zip(fast_idx, years.tolist(), texts):
                if 1990 <= y <= 2200:
                    out[i] = s
                else:
                    problems[i] = f"{values[i]!r}: year {y} is not plausible for a reading"
        else:
            for i in fast_idx:
                try:
                    out[i] = parse_time(values[i])
                except ValueError as e:
                    problems[i] = str(e)
    return out, problems


def _legacy_problems(rec: dict) -> list:
    """Every problem of one record, in the order of the per-record check (the messages of record N)."""
    rec = {k: v for k, v in rec.items() if k not in EXPORT_ONLY and k not in IDS}
    clean, problems = validate_record(rec, extra_fields=META)
    for name in META:
        value, why = stored_text(formula_unguard(rec.get(name)), TEXT_LIMITS.get(name, 10_000))
        if why:
            problems.append((name, why))
        clean[name] = value
    for name in ("site", "board", "taken_at"):
        if not clean.get(name):
            problems.append((name, "is required"))
    if clean.get("taken_at"):
        try:
            parse_time(clean["taken_at"])
        except ValueError as e:
            problems.append(("taken_at", str(e)))
    return problems


def _id_cells(values, name, problems):
    out = []
    for i, v in enumerate(values):
        if v is None or (isinstance(v, str) and not v.strip()):
            out.append(None)
            continue
        if name == "version":
            try:
                n = int(str(v).strip())
                if n < 1:
                    raise ValueError
            except ValueError:
                problems.setdefault(i, []).append((name, f"{v!r} is not a version number (1, 2, ...)"))
                n = None
            out.append(n)
            continue
        try:
            out.append(str(uuid.UUID(str(v).strip())))
        except ValueError:
            problems.setdefault(i, []).append((name, f"{v!r} is not an id (leave it empty for a new reading)"))
            out.append(None)
    return out


def _inputs_json(raw, fields, keep) -> list:
    """``inputs_json`` of each row to store (None for the others): the values as typed, every reading field
    given and not empty, keys sorted, as ``json.dumps(..., ensure_ascii=False, sort_keys=True)`` writes
    them; a row without ``system`` gets a placeholder for its board's (see :data:`_BOARD_SYSTEM`).

    From CSV (text cells, pyarrow columns) the text is joined column by column: a value that passed the
    checks has no quote, backslash or control character, so it needs no escaping."""
    names = sorted(set(fields) | {"system"})
    if raw.arrow is None:
        out = []
        for i in range(raw.n):
            if not keep[i]:
                out.append(None)
                continue
            rec = _typed_inputs(raw, i, fields)
            rec.setdefault("system", "\x00")
            out.append(json.dumps(rec, ensure_ascii=False, sort_keys=True))
        return out
    import pyarrow as pa
    import pyarrow.compute as pc

    n = raw.n
    pieces = []
    for f in names:
        col = raw.arrow.get(f) if f in fields else None
        if col is None:  # no system column: every row takes its board's
            pieces.append(pa.array([', "system": ' + _BOARD_SYSTEM] * n, pa.string()))
            continue
        empty = pc.equal(col, "")
        piece = pc.binary_join_element_wise(f', "{f}": "', col, '"', "")
        if f == "system":
            piece = pc.if_else(empty, ', "system": ' + _BOARD_SYSTEM, piece)
        else:
            piece = pc.if_else(empty, "", piece)
        pieces.append(piece)
    joined = pc.binary_join_element_wise(*pieces, "").to_pylist()
    return [None if not k else "{" + j[2:] + "}" for j, k in zip(joined, keep.tolist())]


#: Stands for the board's system in a row's ``inputs_json`` until the board is known (a JSON string holding
#: U+0000, which no checked value contains).
_BOARD_SYSTEM = '"\\u0000"'


def _typed_inputs(raw, i: int, fields) -> dict:
    """The values as typed (what ``inputs_json`` keeps): every reading field given, not empty."""
    from ..formats.columns import _MISSING

    rec = {}
    for f in fields:
        v = raw.arrow[f][i].as_py() if raw.arrow is not None else raw.cols[f][i]
        if v is None or v is _MISSING or v == "":
            continue
        rec[f] = v
    return rec


def import_stream(db, stream, progress=None) -> ImportReport:
    """Check every record, then store them all in one transaction (see the module docstring).

    ``progress(done, total)`` is called while storing.  Raises
    :class:`fieldpad.formats.records.InputError` for a file that cannot be read.
    """
    from ..formats.columns import Spool, check_block, read_blocks

    report = ImportReport()
    spool = Spool()
    site_cache: dict = {}  # name -> site row or None
    board_cache: dict = {}  # (site id, name) -> board row or None
    seen_ids: set = set()
    system_problems: list = []  # a record's system against an existing board's (told when all else is right)

    def add_problem(line):
        report.problem_count += 1
        if len(report.problems) < 10_000:
            report.problems.append(line)

    for _kind, raw in read_blocks(stream, block_rows=IMPORT_ROWS):
        clean, problems = check_block(raw, extra_fields=META, ignore=EXPORT_ONLY + IDS)
        by_row: dict = {}
        for i, f, r in problems:
            by_row.setdefault(i, []).append((f, r))
        text = {}
        meta_bad = set()
        for name in META:
            if name == "taken_at":
                continue
            text[name], bad = _text_cells(clean.text[name], name)
            meta_bad.update(bad)
        times_raw = [t if t is None else str(t).strip() or None for t in clean.text["taken_at"]]
        taken, bad_t = _times([None if i in meta_bad else t for i, t in enumerate(times_raw)])
        meta_bad.update(bad_t)
        for i in range(clean.n):
            if not (text["site"][i] and text["board"][i] and times_raw[i]):
                meta_bad.add(i)
        for i in sorted((meta_bad | set(by_row)) - raw.skip.keys()):
            by_row[i] = list(raw.extra.get(i, ())) + _legacy_problems(raw.record(i))
        id_problems: dict = {}
        ids = {
            name: _id_cells(_plain_list(raw, name), name, id_problems) if name in raw.cols else [None] * clean.n
            for name in IDS
        }
        for i, probs in id_problems.items():
            by_row.setdefault(i, []).extend(probs)
        for i in sorted(by_row):
            for f, r in by_row[i]:
                add_problem(f"{clean.where[i]}: {f}: {r}")
        if report.problem_count:
            spool.close()
            continue

        # Sites and boards (looked up only: nothing is written before every record is checked).
        system_given = _given_text(raw, "system")
        for i in range(clean.n):
            sname, bname = text["site"][i], text["board"][i]
            if sname not in site_cache:
                same = [s_ for s_ in sites.sites_matching(db, sname) if s_["name"] == sname]
                site_cache[sname] = same[0] if same else None
                if len(same) > 1:  # by id everywhere: two sites of one name are never mixed silently
                    system_problems.append(
                        f"{clean.where[i]}: site: {len(same)} sites are named {sname!r} (ids "
                        f"{', '.join(s_['id'] for s_ in same)}); nothing was imported. If they are the same "
                        "site join them first (fieldpad join-sites KEEP_ID OTHER_ID)"
                    )
            s = site_cache[sname]
            b = None
            if s is not None:
                key = (s["id"], bname)
                if key not in board_cache:
                    twins = [x for x in sites.list_boards(db, s["id"]) if x["name"] == bname]
                    board_cache[key] = twins[0] if twins else None
                    if len(twins) > 1:
                        system_problems.append(
                            f"{clean.where[i]}: board: {len(twins)} boards of site {sname!r} are named {bname!r} "
                            f"(ids {', '.join(x['id'] for x in twins)}); nothing was imported. If they are the "
                            "same board join them first (fieldpad join-boards KEEP_ID OTHER_ID)"
                        )
                b = board_cache[key]
            if b is not None and system_given[i] and b["system"] != _SYSTEM_NAME[int(clean.system[i])]:
                system_problems.append(
                    f"{clean.where[i]}: system: board {bname!r} is {b['system']}, "
                    f"the record says {_SYSTEM_NAME[int(clean.system[i])]}"
                )
        if system_problems:
            continue

        # Records already in the database (by reading id) are skipped.
        keep = np.ones(clean.n, bool)
        rid = ids["reading_id"]
        with_id = [i for i in range(clean.n) if rid[i]]
        if with_id:
            present = _present_ids(db, {rid[i] for i in with_id})
            for i in with_id:
                if rid[i] in present or rid[i] in seen_ids:
                    keep[i] = False
                    report.already += 1
                seen_ids.add(rid[i])
        no_id = np.array([not rid[i] for i in range(clean.n)], bool) & keep
        inputs_fields = [f for f in raw.cols if f not in META and f not in EXPORT_ONLY and f not in IDS]
        inputs_json = _inputs_json(raw, inputs_fields, keep)
        nbytes = sum(len(j) for j in inputs_json if j) + 50 * clean.n
        block = {
            "keep": keep,
            "no_id": no_id,
            "where": clean.where,
            "cols": clean.cols,
            "system": clean.system,
            "system_given": system_given,
            "standard": clean.standard,
            "standard_given": clean.standard_given,
            "text": text,
            "taken_at": taken,
            "ids": ids,
            "inputs": inputs_json,
        }
        spool.add(block, sum(v.nbytes for v in clean.cols.values()) + 200 * clean.n + nbytes, clean.n)
    if report.problem_count or system_problems:
        spool.close()
        if not report.problem_count:
            report.problems = system_problems[:10_000]
            report.problem_count = len(system_problems)
        return report

    # The one transaction: sites, boards and rounds as needed, then the rows in batches.
    with write(db):
        site_ids, site_std, board_rows, round_ids = {}, {}, {}, {}
        existing = None
        total = spool.rows
        done = 0
        for block in spool:
            text, cols = block["text"], block["cols"]
            keep = block["keep"]
            pairs = {}
            for i in np.flatnonzero(keep).tolist():
                pair = (text["site"][i], text["board"][i])
                if pair not in pairs:
                    pairs[pair] = _site_and_board(db, pair, block, i, site_ids, site_std, board_rows, report)
            board_of = [pairs.get((s_, b_)) for s_, b_ in zip(text["site"], text["board"])]
            nominal = cols["nominal_v"].copy()
            missing = np.isnan(nominal) & keep
            if missing.any():
                board_nominal = np.array(
                    [np.nan if b is None or b["nominal_v"] is None else b["nominal_v"] for b in board_of], float
                )
                nominal[missing] = board_nominal[missing]
            values = {f: (nominal if f == "nominal_v" else cols[f]) for f in NUMERIC_FIELDS}
            # Records without an id that repeat a stored reading, or an earlier one of this file: a hash of
            # (board, time, values) finds the candidates, the database says whether one really is.
            no_id = block["no_id"]
            if no_id.any():
                if existing is None:
                    existing = _stored_key_hashes(db, {b["id"] for b in board_rows.values()})
                board_ids = [None if b is None else b["id"] for b in board_of]
                hashes = _key_hashes(board_ids, block["taken_at"], values).tolist()
                here: dict = {}  # this block's rows (earlier blocks are stored already)
                for i in np.flatnonzero(no_id).tolist():
                    h = hashes[i]
                    j = here.get(h)
                    same = j is not None and _row_key(board_ids, block["taken_at"], values, j) == _row_key(
                        board_ids, block["taken_at"], values, i
                    )
                    if same or (
                        j is None and h in existing and _stored(db, _row_key(board_ids, block["taken_at"], values, i))
                    ):
                        keep[i] = False
                        report.repeat_count += 1
                        if len(report.repeats) < 10_000:
                            report.repeats.append(
                                f"{block['where'][i]}: already stored: board "
                                f"{text['board'][i]!r} at {block['taken_at'][i]} with the "
                                "same values; not imported again"
                            )
                        continue
                    existing.add(h)
                    here.setdefault(h, i)
            idx = np.flatnonzero(keep)
            if not idx.size:
                continue
            rows = _rows(db, block, idx, board_of, values, site_ids, site_std, round_ids)
            for k in range(0, len(rows), BATCH):
                _insert(db, rows[k : k + BATCH])
                done += len(rows[k : k + BATCH])
                if progress:
                    progress(done, total)
        if progress:
            progress(total, total)
    report.readings = done
    return report


def _site_and_board(db, pair, block, i, site_ids, site_std, board_rows, report):
    """The board row for (site name, board name), creating the site and the board as needed (inside the
    import's transaction)."""
    sname, bname = pair
    if sname not in site_ids:
        s = sites.find_site(db, sname)
        if s is None:
            std = _STD_NAME[int(block["standard"][i])] if block["standard_given"][i] else "ansi"
            site_ids[sname] = sites.create_site(db, sname, voltage_standard=std)
            site_std[sname] = std
            report.sites_created.append(sname)
        else:
            site_ids[sname], site_std[sname] = s["id"], s["voltage_standard"]
    sid = site_ids[sname]
    if (sid, bname) not in board_rows:
        b = sites.find_board(db, sid, bname)
        if b is None:
            nominal = block["cols"]["nominal_v"][i]
            bid = sites.create_board(
                db,
                sid,
                bname,
                system=_SYSTEM_NAME[int(block["system"][i])],
                nominal_v=None if nominal != nominal else float(nominal),
            )
            b = sites.get_board(db, bid)
            report.boards_created.append(f"{sname} / {bname}")
        board_rows[(sid, bname)] = b
    return board_rows[(sid, bname)]


def _rows(db, block, idx, board_of, values, site_ids, site_std, round_ids) -> list:
    """The reading rows (tuples in :data:`_COLUMNS` order) of the block's rows ``idx``, built column by column."""
    text, ids = block["text"], block["ids"]
    sel = idx.tolist()
    m = len(sel)
    boards = [board_of[i] for i in sel]
    technician = [text["technician"][i] for i in sel]
    taken = [block["taken_at"][i] for i in sel]
    round_col = []
    for i, t_ in zip(sel, taken):
        label = text["round"][i]
        if not label:
            round_col.append(None)
            continue
        sid = site_ids[text["site"][i]]
        key = (sid, label)
        if key not in round_ids:
            found = db.conn.execute("SELECT id FROM round WHERE site_id = ? AND label = ? LIMIT 1", key).fetchone()
            round_ids[key] = found[0] if found else _start_round(db, sid, text["technician"][i], label, t_)
        round_col.append(round_ids[key])
    reading_id = [ids["reading_id"][i] for i in sel]
    version = [ids["version"][i] or 1 for i in sel]
    vid = [ids["version_id"][i] for i in sel]
    fresh = [k for k in range(m) if vid[k] is None and not (reading_id[k] and version[k] == 1)]
    new_ids = uuid7_many(len(fresh))
    for k, v in zip(fresh, new_ids):
        vid[k] = v
    for k in range(m):
        if vid[k] is None:  # version 1 of a reading has the reading's id (storage/versions.py)
            vid[k] = reading_id[k]
        if reading_id[k] is None:
            reading_id[k] = vid[k]
    system_names = [b["system"] for b in boards]
    given = block["system_given"][idx]
    systems = np.asarray(block["system"])[idx].tolist()
    system_col = [_SYSTEM_NAME[s_] if g else bs for s_, g, bs in zip(systems, given.tolist(), system_names)]
    std_given = block["standard_given"][idx].tolist()
    stds = np.asarray(block["standard"])[idx].tolist()
    std_col = [_STD_NAME[s_] if g else site_std[text["site"][i]] for s_, g, i in zip(stds, std_given, sel)]
    placeholder = _BOARD_SYSTEM
    inputs = [block["inputs"][i] for i in sel]
    inputs = [
        j.replace(placeholder, json.dumps(bs), 1) if placeholder in j else j for j, bs in zip(inputs, system_names)
    ]
    now = utc_now()
    numbers = [values[f][idx].tolist() for f in NUMERIC_FIELDS]  # NaN is stored as NULL by SQLite
    consts = [None] * m
    return list(
        zip(
            vid,
            reading_id,
            version,
            consts,
            [b["id"] for b in boards],
            round_col,
            taken,
            technician,
            [text["instrument"][i] for i in sel],
            [text["note"][i] for i in sel],
            [0] * m,
            consts,
            [now] * m,
            technician,
            inputs,
            system_col,
            std_col,
            *numbers,
        )
    )


def uuid7_many(n: int) -> list:
    """``n`` new UUIDv7 texts (RFC 9562 section 5.7), as :func:`fieldpad.storage.ids.uuid7` makes them, at once."""
    import os
    import time

    if n == 0:
        return []
    ms = time.time_ns() // 1_000_000
    raw = np.frombuffer(os.urandom(16 * n), np.uint8).reshape(n, 16).copy()
    raw[:, :6] = np.frombuffer((ms & ((1 << 48) - 1)).to_bytes(6, "big"), np.uint8)
    raw[:, 6] = 0x70 | (raw[:, 6] & 0x0F)  # version 7
    raw[:, 8] = 0x80 | (raw[:, 8] & 0x3F)  # RFC 9562 variant
    hexd = np.frombuffer(b"0123456789abcdef", np.uint8)
    chars = np.empty((n, 36), np.uint8)
    pos = [k for k in range(36) if k not in (8, 13, 18, 23)]
    chars[:, [8, 13, 18, 23]] = ord("-")
    nib = np.empty((n, 32), np.uint8)
    nib[:, 0::2] = raw >> 4
    nib[:, 1::2] = raw & 0x0F
    chars[:, pos] = hexd[nib]
    return chars.view("S36").ravel().astype(str).tolist()


def _row_key(board_ids, taken, values, i):
    return (board_ids[i], taken[i], *[None if x != x else float(x) for x in (values[f][i] for f in NUMERIC_FIELDS)])


def _key_hashes(board_ids, taken, values) -> np.ndarray:
    """A 64-bit hash of (board, time, values) per row (NaN as one value), computed column by column."""
    n = len(board_ids)
    h = np.array([hash(b) for b in board_ids], np.int64).view(np.uint64)
    h = h * np.uint64(0x9E3779B97F4A7C15) ^ np.array([hash(t) for t in taken], np.int64).view(np.uint64)
    canon = np.float64(np.nan).view(np.uint64)
    for f in NUMERIC_FIELDS:
        x = np.asarray(values[f], float)
        bits = np.where(np.isnan(x), canon, (x + 0.0).view(np.uint64))  # + 0.0: -0.0 and 0.0 are one value
        h = (h ^ bits) * np.uint64(0x100000001B3)
        h ^= h >> np.uint64(29)
    return h.view(np.int64)[:n]


_COLUMNS = (
    "id",
    "reading_id",
    "version",
    "supersedes",
    "board_id",
    "round_id",
    "taken_at",
    "technician",
    "instrument",
    "note",
    "void",
    "reason",
    "recorded_at",
    "recorded_by",
    "inputs_json",
    "system",
    "standard",
) + NUMERIC_FIELDS
_INSERT = f"INSERT INTO reading ({', '.join(_COLUMNS)}) VALUES ({', '.join('?' * len(_COLUMNS))})"


def _insert(db, rows):
    db.conn.executemany(_INSERT, rows)


def _start_round(db, site_id, technician, label, started_at):
    rid = uuid7()
    db.conn.execute(
        "INSERT INTO round (id, site_id, label, technician, started_at, finished_at, note) "
        "VALUES (?, ?, ?, ?, ?, NULL, NULL)",
        (rid, site_id, label, technician, started_at),
    )
    return rid


def _plain_list(raw, name):
    from ..formats.columns import _MISSING

    if raw.arrow is not None:
        return raw.arrow[name].to_pylist()
    return [None if v is _MISSING else v for v in raw.cols[name]]


def _given_text(raw, name):
    if name not in raw.cols:
        return np.zeros(raw.n, bool)
    return np.array([v is not None and str(v).strip() != "" for v in _plain_list(raw, name)], bool)


def _present_ids(db, ids: set) -> set:
    out = set()
    ids = list(ids)
    for k in range(0, len(ids), 500):
        part = ids[k : k + 500]
        q = f"SELECT DISTINCT reading_id FROM reading WHERE reading_id IN ({', '.join('?' * len(part))})"
        out.update(r[0] for r in db.conn.execute(q, part))
    return out


def _value_key(board, taken_at, cols, i):
    """(board, time, values as stored) of row ``i``."""
    values = [None if x != x else x for x in (float(cols[f][i]) for f in NUMERIC_FIELDS)]
    if values[0] is None:
        values[0] = board["nominal_v"]
    return (board["id"], taken_at, *values)


def _stored_key_hashes(db, board_ids) -> set:
    """:func:`_key_hashes` of every stored version of the boards' readings."""
    out = set()
    cols = ", ".join(NUMERIC_FIELDS)
    ids = list(board_ids)
    for k in range(0, len(ids), 500):
        part = ids[k : k + 500]
        cur = db.conn.execute(
            f"SELECT board_id, taken_at, {cols} FROM reading WHERE board_id IN ({', '.join('?' * len(part))})", part
        )
        while True:
            batch = cur.fetchmany(65_536)
            if not batch:
                break
            c = list(zip(*batch))
            values = {f: np.array(c[2 + j], dtype=float) for j, f in enumerate(NUMERIC_FIELDS)}
            out.update(_key_hashes(list(c[0]), list(c[1]), values).tolist())
    return out


_SAME = (
    "SELECT 1 FROM reading WHERE board_id = ? AND taken_at = ? AND "
    + " AND ".join(f"{f} IS ?" for f in NUMERIC_FIELDS)
    + " LIMIT 1"
)


def _stored(db, key) -> bool:
    return db.conn.execute(_SAME, key).fetchone() is not None
