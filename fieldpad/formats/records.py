"""Reading and writing reading/result records as JSON or CSV text.

Input: a JSON object, a JSON array of objects, or CSV with a header row
(UTF-8, an optional byte-order mark).  Each record comes with a locator that
names it in messages: ``record 3`` for JSON (counted from 1), ``line 4`` for
CSV (the file's line number, header = line 1).
"""

from __future__ import annotations

import csv
import io
import json
from dataclasses import dataclass

#: The ``format`` of the document that ``fieldpad export --format json`` writes.
EXPORT_FORMAT = "fieldpad-export"


class InputError(ValueError):
    """The input as a whole cannot be read; ``str()`` says why."""


@dataclass
class ParsedInput:
    records: list  # list of (locator, dict)
    kind: str  # "json-object", "json-array" or "csv"


def decode(data: bytes) -> str:
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as e:
        line = data[: e.start].count(b"\n") + 1
        raise InputError(
            f"line {line}: the file is not UTF-8 text (byte 0x{data[e.start]:02x}); save it as UTF-8 and try again"
        ) from None


def parse_records(data: bytes) -> ParsedInput:
    """Parse JSON or CSV bytes into records (see module docstring)."""
    text = decode(data)
    if "\x00" in text:
        raise InputError("the file contains NUL bytes: it is not a text file of readings")
    stripped = text.lstrip()
    if not stripped:
        raise InputError("the input is empty: no readings")
    if stripped[0] in "[{":
        try:
            obj = json.loads(text, parse_constant=_Constant, object_pairs_hook=_object)
        except json.JSONDecodeError as e:
            raise InputError(f"line {e.lineno} column {e.colno}: malformed JSON ({e.msg})") from None
        except ValueError as e:
            raise InputError(f"malformed JSON: {e}") from None
        except RecursionError:
            raise InputError("malformed JSON: nested too deeply to be readings") from None
        if isinstance(obj, dict) and obj.get("format") == EXPORT_FORMAT and isinstance(obj.get("readings"), list):
            # A file written by `fieldpad export --format json`: its readings, inputs beside the meta fields
            # (results and findings are computed again; import reads past them as for CSV).
            obj = [_flat_export_record(r) for r in obj["readings"]]
            if not obj:
                raise InputError("the export holds no readings")
        elif isinstance(obj, dict):
            return ParsedInput([("record 1", obj)], "json-object")
        if not obj:
            raise InputError("the JSON array is empty: no readings")
        recs = []
        for k, item in enumerate(obj, start=1):
            if not isinstance(item, dict):
                raise InputError(f"record {k}: expected a JSON object with reading fields, got {type(item).__name__}")
            recs.append((f"record {k}", item))
        return ParsedInput(recs, "json-array")
    return ParsedInput(_parse_csv(text), "csv")


def _flat_export_record(rec):
    if not isinstance(rec, dict):
        return rec
    inputs = rec.get("inputs") if isinstance(rec.get("inputs"), dict) else {}
    flat = {
        k: v for k, v in rec.items() if k not in ("inputs", "results", "findings", "board_id", "site_id", "conflict")
    }
    return {**flat, **inputs}


class _Constant(str):
    """A JSON ``NaN``/``Infinity``/``-Infinity`` met while parsing: reported with its record and field."""


def _object(pairs):
    """A JSON object; a field given twice or given NaN/Infinity is kept as a problem of its record
    (reported as ``record N: field: reason``), never silently last-wins."""
    obj, problems = {}, []
    for key, value in pairs:
        if key in obj or any(f == key for f, _ in problems):
            problems.append((key, "is given twice in this record; give it once"))
            continue
        if isinstance(value, _Constant):
            problems.append((key, f"{value} is not allowed in JSON readings (not a finite number)"))
            value = None
        obj[key] = value
    if problems:
        obj[PROBLEMS_KEY] = problems
    return obj


def _parse_csv(text: str):
    reader = csv.reader(io.StringIO(text, newline=""))
    try:
        header = next(reader)
    except csv.Error as e:
        raise InputError(f"line 1: malformed CSV ({e})") from None
    header = check_header(header)
    recs = []
    try:
        for row in reader:
            line = reader.line_num
            if not row or all(not c.strip() for c in row):
                continue
            if len(row) > len(header):
                recs.append((f"line {line}", {"__extra__": len(row) - len(header)}))
                continue
            recs.append((f"line {line}", {h: (row[k] if k < len(row) else None) for k, h in enumerate(header)}))
    except csv.Error as e:
        raise InputError(f"line {reader.line_num}: malformed CSV ({e})") from None
    if not recs:
        raise InputError("the CSV has a header but no readings")
    return recs


def check_header(header: list) -> list:
    """The CSV header's names, stripped; refuses an empty header, a name given twice and a column without
    a name.  Linear in the number of columns."""
    header = [h.strip() for h in header]
    if not any(header):
        raise InputError("line 1: the CSV header row is empty")
    seen, dup = set(), set()
    for h in header:
        if h in seen and h:
            dup.add(h)
        seen.add(h)
    if dup:
        raise InputError(f"line 1: column(s) named twice in the header: {', '.join(sorted(dup))}")
    if "" in header:
        raise InputError(f"line 1: column {header.index('') + 1} of the header has no name")
    return header


PROBLEMS_KEY = "__problems__"


def record_problems(record: dict) -> list[tuple[str, str]]:
    """Problems found while reading a record, as (field, reason): a CSV row with more values than the
    header has columns, a JSON field given twice or given NaN/Infinity."""
    if "__extra__" in record:
        return [("(row)", f"{record['__extra__']} more value(s) than the header has columns")]
    return list(record.get(PROBLEMS_KEY, ()))


#: A cell starting with one of these is run as a formula by spreadsheets (OWASP "CSV injection").
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def formula_guard(text):
    """Text typed by a person, made safe for a spreadsheet: a leading formula character gets a ``'``."""
    if isinstance(text, str) and text.startswith(FORMULA_STARTS):
        return "'" + text
    return text


def formula_unguard(text):
    """Undo :func:`formula_guard` (import reads back what export wrote)."""
    if isinstance(text, str) and text.startswith("'") and text[1:].startswith(FORMULA_STARTS):
        return text[1:]
    return text


def csv_cell(value):
    """A CSV cell for a value: numbers stay numbers, None is empty."""
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value)
    return value


def findings_cell(findings) -> str:
    return " | ".join(f"{f['severity']}:{f['code']}" + (f"({f['phase']})" if f.get("phase") else "") for f in findings)


def write_csv(records, fields) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(fields)
    for r in records:
        w.writerow([findings_cell(r[f]) if f == "findings" else csv_cell(r.get(f)) for f in fields])
    return buf.getvalue()
