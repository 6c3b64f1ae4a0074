"""Reading files as column blocks, and checking whole columns at once.

The batch commands (``compute``, ``import``) read their input here a block at a time: a block is a
:class:`RawBlock` (field name -> the cells as given, with each row's locator: ``line N`` for CSV, ``record
N`` for JSON) and :func:`check_block` turns it into clean column arrays for
:func:`fieldpad.core.analysis.analyze` with the problems of its rows.

Checking is columnar: a cell that is a plain decimal number (or empty) is converted with the rest of its
column at once; only the cells that need it (``277V``, ``277,5``, ``30 lag``, a bad value) go through
:func:`fieldpad.core.readings.parse_value`, and a row with any problem is checked again by
:func:`fieldpad.core.readings.validate_record`, so every message is the one the per-record check gives
(record or line, field, reason).

CSV is read with pyarrow's CSV reader (a columnar reader in C++, imported only here, by the batch
commands); a file it cannot map line by line (a quoted value spanning lines, a row with a different number
of values than the header, a text that is not UTF-8) is read by :mod:`csv` instead, with the same checks.
JSON is decoded one record at a time from a bounded buffer.  Memory is bounded by the block, not the file.
"""

from __future__ import annotations

import codecs
import csv
import io
import json
import re

import numpy as np

from ..core.fields import I_PH, NUMERIC_FIELDS, RATING_FIELDS, STANDARDS, SYSTEMS, V_LL, V_LN, VI_FIELDS
from ..core.readings import (
    BOARD_FIELD_KIND,
    BOARD_TEXT_FIELDS,
    FIELD_KIND,
    IEC_NOMINALS,
    MAX_ABS_DEG,
    MAX_AMPS,
    MAX_VOLTS,
    VOLTS,
    ReadingError,
    parse_value,
    validate_record,
)
from .records import (
    EXPORT_FORMAT,
    PROBLEMS_KEY,
    InputError,
    _Constant,
    _flat_export_record,
    _object,
    check_header,
    decode,
    record_problems,
)

#: Rows per block: large enough that the analysis splits a block over its threads
#: (``fieldpad.core.analysis`` splits above 2 x its own block of 16,384), small enough to bound memory.
BLOCK_ROWS = 65_536
#: A CSV file smaller than this is read by the csv module (pyarrow is not even loaded: the demo site and a
#: day's file do not pay for its start-up).
SMALL_BYTES = 1 << 20
#: Bytes read from a file at a time.
CHUNK_BYTES = 2 << 20

_ALLOWED = np.zeros(256, bool)
for _c in b"0123456789.eE+-":
    _ALLOWED[_c] = True


class RawBlock:
    """A block of rows as given: ``cols`` field -> list of cells (str, number or None), ``where`` the
    locator of each row, ``extra`` row index -> problems found while reading it (field, reason), ``skip``
    rows that cannot be used at all (a CSV row with more values than the header)."""

    def __init__(self, cols: dict, where: list, extra=None, skip=None, arrow=None):
        self.cols = cols
        self.where = where
        self.extra = extra or {}
        self.skip = skip or {}  # row index -> how many more values than the header has columns
        self.arrow = arrow  # field -> pyarrow string array (the CSV fast path), else None
        self.n = len(where)

    def record(self, i: int) -> dict:
        """Row ``i`` as the per-record check takes it."""
        rec = {}
        for k, v in self.cols.items():
            if self.arrow is not None and k in self.arrow:
                v = self.arrow[k][i].as_py()
                if v is None:
                    continue
            else:
                v = v[i]
                if v is _MISSING:
                    continue
            rec[k] = v
        return rec


_MISSING = object()  # a JSON record without the field (not the same as null in a CSV-shaped check)


# ---- reading ---------------------------------------------------------------------------------------------


def read_blocks(stream, *, block_rows: int = BLOCK_ROWS):
    """Yield ``(kind, RawBlock)`` from a binary stream holding JSON or CSV (see
    :mod:`fieldpad.formats.records`).  Raises :class:`InputError` for input that cannot be read."""
    head = stream.read(CHUNK_BYTES)
    probe = head[3:] if head.startswith(codecs.BOM_UTF8) else head
    first = probe.lstrip()[:1]
    if not first:
        rest = stream.read()
        if rest.strip():  # a file of blanks followed by more: read as a whole
            head += rest
            probe = head.lstrip()
            first = probe[:1]
        else:
            _decode_strict(head)
            raise InputError("the input is empty: no readings")
    if first in (b"[", b"{"):
        yield from _json_blocks(head, stream, block_rows)
    else:
        yield from _csv_blocks(head, stream, block_rows)


def _decode_strict(data: bytes) -> str:
    text = decode(data)
    if "\x00" in text:
        raise InputError("the file contains NUL bytes: it is not a text file of readings")
    return text


# ---- CSV -------------------------------------------------------------------------------------------------


def _csv_blocks(head: bytes, stream, block_rows):
    f = _seekable(head, stream)
    try:
        f.seek(0, 2)
        small = f.tell() < SMALL_BYTES
        f.seek(0)
        plan = _scan(f, arrow=not small)
        f.seek(0)
        if plan is None:
            yield from _csv_blocks_python(f, block_rows)
        else:
            yield from _csv_blocks_arrow(f, plan, block_rows)
    finally:
        if f is not stream:
            f.close()


def _seekable(head: bytes, stream):
    """A binary file holding the whole input, at its start: the stream itself when it can seek (a file),
    else a temporary copy (standard input), so the file is read twice without being held in memory."""
    try:
        if stream.seekable():
            stream.seek(0)
            return stream
    except (AttributeError, OSError):
        pass
    import tempfile

    f = tempfile.TemporaryFile()
    f.write(head)
    while True:
        chunk = stream.read(CHUNK_BYTES)
        if not chunk:
            break
        f.write(chunk)
    f.seek(0)
    return f


def _scan(f, arrow: bool = True):
    """One pass over the file in chunks: refuses text that is not UTF-8 or holds NUL bytes (the messages of
    :func:`fieldpad.formats.records.decode`), and returns the line numbers of the data rows when pyarrow can
    read the file row for line (every line has the header's number of values, no quoted value spans lines,
    no bare carriage return), else None."""
    if arrow:
        try:
            import pyarrow  # noqa: F401
        except ImportError:  # pragma: no cover - a dependency; the csv module reads the file then
            arrow = False
    dec = codecs.getincrementaldecoder("utf-8-sig")()
    carry = b""
    lines_before = 0  # line ends in the chunks decoded so far
    lines_done = 0  # complete lines looked at
    rows = []
    width = None
    while True:
        chunk = f.read(CHUNK_BYTES)
        final = not chunk
        try:
            text = dec.decode(chunk, final)
        except UnicodeDecodeError as e:
            data = e.object
            line = lines_before + data[: e.start].count(b"\n") + 1
            raise InputError(
                f"line {line}: the file is not UTF-8 text (byte 0x{data[e.start]:02x}); save it as UTF-8 and try again"
            ) from None
        if "\x00" in text:
            raise InputError("the file contains NUL bytes: it is not a text file of readings")
        lines_before += chunk.count(b"\n")
        if arrow:
            buf = carry + chunk
            if final:
                part, carry = buf, b""
            else:
                cut = buf.rfind(b"\n") + 1
                part, carry = buf[:cut], buf[cut:]
            if part:
                got = _scan_lines(part, lines_done, width)
                if got is None:
                    arrow = False
                    carry = b""
                else:
                    nums, width, count = got
                    rows.append(nums)
                    lines_done += count
        if final:
            break
    if not arrow:
        return None
    nums = np.concatenate(rows) if rows else np.zeros(0, np.int64)
    if nums.size == 0 or nums[0] != 1:
        return None  # no header on the first line: the csv module says what is wrong
    return nums[1:]


def _scan_lines(part: bytes, first_line: int, width):
    """(numbers of the non-empty lines, values per line, lines in ``part``) for whole lines, or None."""
    if part.count(b"\r") != part.count(b"\r\n"):
        return None
    b = np.frombuffer(part, np.uint8)
    nl = np.flatnonzero(b == 10)
    if b[-1] != 10:
        nl = np.append(nl, b.size)
    comma = np.flatnonzero(b == 44)
    if b'"' in part:
        quote = np.flatnonzero(b == 34)
        if (np.searchsorted(quote, nl) % 2).any():
            return None  # a quoted value spanning lines
        comma = comma[np.searchsorted(quote, comma) % 2 == 0]  # a comma inside quotes is part of the value
    per_line = np.diff(np.concatenate(([0], np.searchsorted(comma, nl))))
    starts = np.concatenate(([0], nl[:-1] + 1))
    lengths = nl - starts
    cr = b[np.clip(nl - 1, 0, b.size - 1)] == 13
    lengths = lengths - (cr & (lengths > 0))
    nonempty = lengths > 0
    counts = per_line[nonempty]
    if counts.size:
        if width is None:
            width = int(counts[0])
        if (counts != width).any():
            return None  # a row with more or fewer values than the header
    return np.flatnonzero(nonempty) + 1 + first_line, width, nl.size


def _csv_blocks_arrow(f, line_numbers, block_rows):
    import pyarrow as pa
    import pyarrow.csv as pcsv

    # The C library's allocator (set up by fieldpad.commands.batch_memory) rather than pyarrow's own, which
    # keeps what it freed for itself: memory stays bounded by the block.
    pa.set_memory_pool(pa.system_memory_pool())

    header_line = f.readline().rstrip(b"\r\n")
    f.seek(0)
    try:
        header = next(csv.reader([decode(header_line)]))
    except csv.Error as e:
        raise InputError(f"line 1: malformed CSV ({e})") from None
    header = check_header(header)
    names = [f"c{k}" for k in range(len(header))]
    bad_rows = []

    def on_invalid(row):
        bad_rows.append(row)
        return "skip"

    try:
        reader = pcsv.open_csv(
            f,
            read_options=pcsv.ReadOptions(column_names=names, skip_rows=1, block_size=1 << 20, use_threads=True),
            parse_options=pcsv.ParseOptions(invalid_row_handler=on_invalid),
            convert_options=pcsv.ConvertOptions(
                column_types={c: pa.string() for c in names},
                strings_can_be_null=False,
                quoted_strings_can_be_null=False,
            ),
        )
        batches = _rebatch(reader, block_rows)
        first = next(batches, None)
    except (pa.ArrowInvalid, UnicodeDecodeError):
        f.seek(0)
        yield from _csv_blocks_python(f, block_rows)
        return
    if bad_rows:  # a row with another number of values than the header: read by the csv module
        f.seek(0)
        yield from _csv_blocks_python(f, block_rows)
        return
    pos, seen = 0, False
    try:
        for batch in ([first] if first is not None else []), batches:
            for b in batch:
                if bad_rows:
                    raise _Fallback
                n = b.num_rows
                where = [f"line {k}" for k in line_numbers[pos : pos + n].tolist()]
                pos += n
                arrow = {h: b.column(k) for k, h in enumerate(header)}
                keep = _not_blank(arrow, n)
                if not keep.all():
                    idx = np.flatnonzero(keep)
                    arrow = {h: a.take(pa.array(idx)) for h, a in arrow.items()}
                    where = [where[i] for i in idx.tolist()]
                if not where:
                    continue
                seen = True
                yield "csv", RawBlock({h: None for h in header}, where, arrow=arrow)
    except _Fallback:  # not expected: _scan counted every line's values
        raise InputError(f"line {bad_rows[0].number}: a row has more or fewer values than the header") from None
    except pa.ArrowInvalid as e:
        raise InputError(f"malformed CSV ({e})") from None
    if not seen:
        raise InputError("the CSV has a header but no readings")


class _Fallback(Exception):
    pass


def _rebatch(reader, rows):
    """Record batches of about ``rows`` rows (pyarrow's come in blocks of bytes)."""
    import pyarrow as pa

    pending, count = [], 0
    for b in reader:
        pending.append(b)
        count += b.num_rows
        while count >= rows:
            t = pa.Table.from_batches(pending).combine_chunks()
            head, tail = t.slice(0, rows), t.slice(rows)
            yield head.to_batches(max_chunksize=rows)[0] if head.num_rows else head
            pending = tail.to_batches() if tail.num_rows else []
            count = tail.num_rows
    if count:
        t = pa.Table.from_batches(pending).combine_chunks()
        yield t.to_batches(max_chunksize=count)[0]


def _not_blank(arrow: dict, n: int):
    """Rows with some value that is not blank (the csv module path skips blank rows too)."""
    import pyarrow.compute as pc

    keep = np.zeros(n, bool)
    for a in arrow.values():
        keep |= np.asarray(pc.utf8_length(pc.utf8_trim_whitespace(a))) > 0
    return keep


def _csv_blocks_python(f, block_rows):
    """The csv module's reading of the file (checked as UTF-8 by :func:`_scan`), the messages of
    :func:`fieldpad.formats.records.parse_records`."""
    reader = csv.reader(io.TextIOWrapper(f, encoding="utf-8-sig", newline=""))
    try:
        header = next(reader)
    except csv.Error as e:
        raise InputError(f"line 1: malformed CSV ({e})") from None
    except StopIteration:
        raise InputError("the input is empty: no readings") from None
    header = check_header(header)
    cols = {h: [] for h in header}
    where, skip, seen = [], {}, False
    width = len(header)
    try:
        for row in reader:
            line = reader.line_num
            if not row or all(not c.strip() for c in row):
                continue
            if len(row) > width:
                skip[len(where)] = len(row) - width
            where.append(f"line {line}")
            for k, h in enumerate(header):
                cols[h].append(row[k] if k < len(row) else None)
            if len(where) >= block_rows:
                seen = True
                yield "csv", RawBlock(cols, where, skip=skip)
                cols, where, skip = {h: [] for h in header}, [], {}
    except csv.Error as e:
        raise InputError(f"line {reader.line_num}: malformed CSV ({e})") from None
    if where:
        seen = True
        yield "csv", RawBlock(cols, where, skip=skip)
    if not seen:
        raise InputError("the CSV has a header but no readings")


# ---- JSON ------------------------------------------------------------------------------------------------


def _json_blocks(head: bytes, stream, block_rows):
    """JSON: an object, an array of objects, or a ``fieldpad export --format json`` document.  An array is
    decoded one record at a time from a bounded buffer; anything else is read whole."""
    dec = codecs.getincrementaldecoder("utf-8-sig")()
    lines_before = 0

    def text_of(chunk: bytes, final=False) -> str:
        nonlocal lines_before
        try:
            t = dec.decode(chunk, final)
        except UnicodeDecodeError as e:
            line = lines_before + chunk[: e.start].count(b"\n") + 1
            raise InputError(
                f"line {line}: the file is not UTF-8 text (byte 0x{chunk[e.start]:02x}); save it as UTF-8 and try again"
            ) from None
        lines_before += chunk.count(b"\n")
        if "\x00" in t:
            raise InputError("the file contains NUL bytes: it is not a text file of readings")
        return t

    buf = text_of(head)
    i = len(buf) - len(buf.lstrip())
    if buf[i : i + 1] != "[":
        yield from _json_whole(buf + text_of(stream.read(), True))
        return
    decoder = json.JSONDecoder(parse_constant=_Constant, object_pairs_hook=_object)
    pos = i + 1
    eof = False
    line_base = 1  # line number at buf[0]
    cols: dict = {}
    where: list = []
    count = 0
    extra = {}
    expect_value = True
    not_object: list = []

    def fill():
        nonlocal buf, pos, eof, line_base
        if eof:
            return False
        chunk = stream.read(CHUNK_BYTES)
        if not chunk:
            eof = True
            tail = text_of(b"", True)
            buf = buf[pos:] + tail
            line_base += 0
            pos = 0
            return bool(tail)
        line_base += buf.count("\n", 0, pos)
        buf = buf[pos:] + text_of(chunk)
        pos = 0
        return True

    def skip_ws():
        nonlocal pos
        while True:
            m = _WS.match(buf, pos)
            pos = m.end()
            if pos < len(buf) or not fill():
                return

    def malformed(msg, at):
        line = line_base + buf.count("\n", 0, at)
        col = at - (buf.rfind("\n", 0, at) + 1) + 1
        return InputError(f"line {line} column {col}: malformed JSON ({msg})")

    def flush():
        nonlocal cols, where, extra
        block = RawBlock(cols, where, extra=extra)
        cols, where, extra = {}, [], {}
        return block

    while True:
        skip_ws()
        if pos >= len(buf):
            raise malformed("Expecting ',' delimiter" if not expect_value else "Expecting value", pos)
        ch = buf[pos]
        if ch == "]" and (count == 0 or not expect_value):
            pos += 1
            break
        if not expect_value:
            if ch != ",":
                raise malformed("Expecting ',' delimiter", pos)
            pos += 1
            expect_value = True
            continue
        while True:
            try:
                obj, end = decoder.raw_decode(buf, pos)
                if end >= len(buf) and not eof and isinstance(obj, (int, float)) and fill():
                    continue  # a number cut off at the end of the buffer
                break
            except json.JSONDecodeError as e:
                # A record cut off at the end of the buffer: read on (a record is never this large).
                if len(buf) - pos < (64 << 20) and fill():
                    continue
                raise malformed(e.msg, e.pos) from None
            except RecursionError:
                raise InputError("malformed JSON: nested too deeply to be readings") from None
        pos = end
        count += 1
        expect_value = False
        if not isinstance(obj, dict) or not_object:
            # Reported once the whole text has been read (a syntax error later on is told first).
            if not not_object:
                not_object.append(
                    InputError(f"record {count}: expected a JSON object with reading fields, got {type(obj).__name__}")
                )
            continue
        k = len(where)
        where.append(f"record {count}")
        probs = obj.pop(PROBLEMS_KEY, None)
        if probs:
            extra[k] = probs
        for f in obj:
            if f not in cols:
                cols[f] = [_MISSING] * k
        for f, col in cols.items():
            col.append(obj.get(f, _MISSING))
        if len(where) >= block_rows:
            yield "json-array", flush()
    skip_ws()
    if pos < len(buf):
        raise malformed("Extra data", pos)
    if not_object:
        raise not_object[0]
    if count == 0:
        raise InputError("the JSON array is empty: no readings")
    if where:
        yield "json-array", flush()


_WS = re.compile(r"[ \t\n\r]*")


def _json_whole(text: str):
    try:
        obj = json.loads(text, parse_constant=_Constant, object_pairs_hook=_object)
    except json.JSONDecodeError as e:
        raise InputError(f"line {e.lineno} column {e.colno}: malformed JSON ({e.msg})") from None
    except ValueError as e:
        raise InputError(f"malformed JSON: {e}") from None
    except RecursionError:
        raise InputError("malformed JSON: nested too deeply to be readings") from None
    kind = "json-array"
    if isinstance(obj, dict) and obj.get("format") == EXPORT_FORMAT and isinstance(obj.get("readings"), list):
        obj = [_flat_export_record(r) for r in obj["readings"]]
        if not obj:
            raise InputError("the export holds no readings")
    elif isinstance(obj, dict):
        obj, kind = [obj], "json-object"
    for start in range(0, len(obj), BLOCK_ROWS):
        cols, where, extra = {}, [], {}
        for k, item in enumerate(obj[start : start + BLOCK_ROWS]):
            if not isinstance(item, dict):
                raise InputError(
                    f"record {start + k + 1}: expected a JSON object with reading fields, got {type(item).__name__}"
                )
            where.append(f"record {start + k + 1}")
            probs = item.pop(PROBLEMS_KEY, None)
            if probs:
                extra[k] = probs
            for f in item:
                if f not in cols:
                    cols[f] = [_MISSING] * k
            for f, col in cols.items():
                col.append(item.get(f, _MISSING))
        yield kind, RawBlock(cols, where, extra=extra)


# ---- checking whole columns --------------------------------------------------------------------------------


class CleanBlock:
    """Checked columns: ``cols`` numeric field -> float array (NaN = not entered), ``system`` and
    ``standard`` code arrays, ``text`` extra field -> list of stripped text or None, ``given`` field ->
    bool array (a value was given in the file), ``where`` the locators."""

    def __init__(self, n, cols, system, standard, text, given, where, standard_given):
        self.n = n
        self.cols = cols
        self.system = system
        self.standard = standard
        self.text = text
        self.given = given
        self.where = where
        self.standard_given = standard_given


def _number_column(raw: RawBlock, name: str, kind: str):
    """(values, slow): float array (NaN where empty) and the row indexes whose cell needs the per-cell
    parser (a spelling other than a plain number, or a value out of range)."""
    n = raw.n
    if raw.arrow is not None:
        if name not in raw.arrow:
            return np.full(n, np.nan), np.empty(0, np.intp)
        return _arrow_numbers(raw.arrow[name], kind)
    col = raw.cols.get(name)
    if col is None:
        return np.full(n, np.nan), np.empty(0, np.intp)
    x = np.full(n, np.nan)
    slow = []
    for i, v in enumerate(col):
        if v is None or v is _MISSING:
            continue
        t = type(v)
        if t is float or t is int:
            x[i] = v
        elif t is str and _PLAIN.fullmatch(v):
            x[i] = float(v)
        else:
            slow.append(i)
    slow = np.array(slow, np.intp)
    return x, _out_of_range(x, kind, slow)


_PLAIN = re.compile(r"[ \t]*[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?[ \t]*")


def _out_of_range(x, kind, slow):
    with np.errstate(invalid="ignore"):
        if kind == "deg":
            bad = np.abs(x) > MAX_ABS_DEG
        else:
            bad = (x < 0) | (x > (MAX_VOLTS if kind == VOLTS else MAX_AMPS))
        bad |= np.isinf(x)
    if bad.any():
        slow = np.union1d(slow, np.flatnonzero(bad))
    return slow


def _arrow_numbers(a, kind):
    """A pyarrow string column: plain numbers converted at once (pyarrow's parser rounds correctly, as
    Python's float() does); the row indexes of the other non-empty cells."""
    import pyarrow as pa
    import pyarrow.compute as pc

    n = len(a)
    offsets = np.frombuffer(a.buffers()[1], np.int32, n + 1, a.offset * 4)
    data_buf = a.buffers()[2]
    data = np.frombuffer(data_buf, np.uint8) if data_buf is not None else np.zeros(0, np.uint8)
    lengths = np.diff(offsets)
    bad = np.concatenate(([0], np.cumsum(~_ALLOWED[data[offsets[0] : offsets[-1]]], dtype=np.int64)))
    nbad = bad[offsets[1:] - offsets[0]] - bad[offsets[:-1] - offsets[0]]
    plain = (nbad == 0) & (lengths > 0)
    x = np.full(n, np.nan)
    slow = np.flatnonzero(~plain & (lengths > 0))
    idx = np.flatnonzero(plain)
    if idx.size:
        sub = a if idx.size == n else a.take(pa.array(idx))
        try:
            x[idx] = np.asarray(pc.cast(sub, pa.float64()))
        except pa.ArrowInvalid:  # e.g. "1e" or "+-5": each cell on its own
            for i in idx.tolist():
                try:
                    x[i] = float(a[i].as_py())
                except ValueError:
                    slow = np.append(slow, i)
            slow.sort()
    return x, _out_of_range(x, kind, slow)


def _cell(raw: RawBlock, name: str, i: int):
    if raw.arrow is not None:
        return raw.arrow[name][i].as_py()
    v = raw.cols[name][i]
    return None if v is _MISSING else v


def _strip_lower(values):
    return [None if v is None or v is _MISSING or str(v).strip() == "" else str(v).strip().lower() for v in values]


def _text_column(raw: RawBlock, name: str) -> list:
    if raw.arrow is not None:
        if name not in raw.arrow:
            return [None] * raw.n
        return raw.arrow[name].to_pylist()
    col = raw.cols.get(name)
    if col is None:
        return [None] * raw.n
    return [None if v is _MISSING else v for v in col]


def check_block(raw: RawBlock, extra_fields=(), ignore=(), board_inputs: bool = False) -> tuple[CleanBlock, list]:
    """Check a block of rows as :func:`fieldpad.core.readings.validate_record` checks one record.

    Returns ``(clean, problems)``; ``problems`` is a list of ``(row index, field, reason)`` in row order,
    each row's in the per-record check's order (problems found while reading the row come first).
    ``ignore`` names fields that are read past (the columns an export adds).  ``board_inputs``: the board
    inputs (ratings, V-I displacement, purpose, expected rotation) are accepted too, as ``fieldpad compute``
    takes them (``validate_record(..., board_inputs=True)``).
    """
    n = raw.n
    extra = tuple(extra_fields)
    known = set(FIELD_KIND) | {"system", "standard"} | set(extra) | set(ignore)
    if board_inputs:
        known |= set(BOARD_FIELD_KIND) | set(BOARD_TEXT_FIELDS)
    suspect = np.zeros(n, bool)
    present = [k for k in raw.cols if k not in ignore]
    if any(k not in known for k in present):
        suspect[:] = True  # "unknown field" for every row that has it
    for i in raw.extra:
        suspect[i] = True
    if raw.skip:
        suspect[list(raw.skip)] = True

    cols, given = {}, {}
    for name in NUMERIC_FIELDS:
        _checked_numbers(raw, name, FIELD_KIND[name], cols, given, suspect)

    system_txt = _strip_lower(_text_column(raw, "system")) if "system" in raw.cols else [None] * n
    system = np.zeros(n, np.int8)
    if "system" in raw.cols:
        for i, s in enumerate(system_txt):
            if s is None:
                continue
            code = SYSTEMS.get(s)
            if code is None:
                suspect[i] = True
            else:
                system[i] = code
    std_txt = _strip_lower(_text_column(raw, "standard")) if "standard" in raw.cols else [None] * n
    standard_given = np.array([s is not None for s in std_txt], bool)
    nominal = cols["nominal_v"]
    standard = np.isin(nominal, list(IEC_NOMINALS)).astype(np.int8)
    for i in np.flatnonzero(standard_given).tolist():
        code = STANDARDS.get(std_txt[i])
        if code is None:
            suspect[i] = True
        else:
            standard[i] = code

    # Checks across fields, as validate_record makes them.
    for f in V_LN + V_LL + I_PH:
        suspect |= given[f + "_deg"] & ~given[f]
    suspect |= nominal == 0
    from ..core.fields import DELTA, SPLIT

    split = system == SPLIT
    if split.any():
        for f in ("vc", "vc_deg", "ic", "ic_deg", "vbc", "vca", "vbc_deg", "vca_deg"):
            suspect |= split & given[f]
    delta = system == DELTA
    if delta.any():
        for f in V_LN:
            suspect |= delta & given[f]
    a, b, c = cols["vab"], cols["vbc"], cols["vca"]
    with np.errstate(invalid="ignore"):
        tol = 1e-9 * (a + b + c)
        tri = ~((a <= b + c + tol) & (b <= a + c + tol) & (c <= a + b + tol))
    suspect |= tri & given["vab"] & given["vbc"] & given["vca"]

    if board_inputs:
        _board_columns(raw, cols, given, suspect)

    text = {name: _text_column(raw, name) for name in extra}
    problems = []
    for i in np.flatnonzero(suspect).tolist():
        early = list(raw.extra.get(i, ()))
        if i in raw.skip:
            early.insert(0, ("(row)", f"{_row_extra(raw, i)} more value(s) than the header has columns"))
            problems.extend((i, f, r) for f, r in early)
            continue
        rec = {k: v for k, v in raw.record(i).items() if k not in ignore}
        _clean, probs = validate_record(rec, extra_fields=extra, board_inputs=board_inputs)
        problems.extend((i, f, r) for f, r in early + probs)
    clean = CleanBlock(n, cols, system, standard, text, given, raw.where, standard_given)
    return clean, problems


def _checked_numbers(raw: RawBlock, name: str, kind: str, cols: dict, given: dict, suspect) -> None:
    """One numeric column: plain numbers at once, other spellings through ``parse_value``; a cell it
    refuses marks its row for the per-record check (which words the message)."""
    x, slow = _number_column(raw, name, kind)
    for i in slow.tolist():
        try:
            v = parse_value(_cell(raw, name, i), kind)
        except ReadingError:
            suspect[i] = True
            v = None
        x[i] = np.nan if v is None else v
    cols[name] = x
    given[name] = ~np.isnan(x)


def _board_columns(raw: RawBlock, cols: dict, given: dict, suspect) -> None:
    """The board inputs of a block as columns (numbers; purpose and expected rotation as their codes), and
    the rows the per-record check must look at (a spelling or value it refuses, or fields that clash)."""
    for name, kind in BOARD_FIELD_KIND.items():
        if name in raw.cols:
            _checked_numbers(raw, name, kind, cols, given, suspect)
    for name in RATING_FIELDS:
        if name in cols:
            suspect |= given[name] & ~(cols[name] > 0)
    for f, vi in zip(I_PH, VI_FIELDS):
        if vi in cols:
            suspect |= given[vi] & (~given[f] | given[f + "_deg"])
    for name, choices in BOARD_TEXT_FIELDS.items():
        if name not in raw.cols:
            continue
        codes = np.full(raw.n, np.nan)
        for i, s in enumerate(_strip_lower(_text_column(raw, name))):
            if s is None:
                continue
            if s in choices:
                codes[i] = choices[s]
            else:
                suspect[i] = True
        cols[name] = codes
        given[name] = ~np.isnan(codes)


def _row_extra(raw: RawBlock, i: int) -> int:
    return raw.skip[i]


def problem_lines(clean_or_raw, problems) -> list[str]:
    """``where: field: reason`` lines."""
    where = clean_or_raw.where
    return [f"{where[i]}: {f}: {r}" for i, f, r in problems]


__all__ = ["BLOCK_ROWS", "CleanBlock", "RawBlock", "check_block", "problem_lines", "read_blocks", "record_problems"]


class Spool:
    """Checked blocks kept until every block is checked: in memory up to ``limit`` bytes, then in an
    anonymous temporary file (read back once, in order), so memory stays bounded by a block."""

    def __init__(self, limit: int = 32 << 20):
        self.limit = limit
        self.mem: list = []
        self.size = 0
        self.file = None
        self.on_file = 0
        self.rows = 0

    def add(self, block, nbytes: int, rows: int) -> None:
        self.rows += rows
        if self.file is None and self.size + nbytes <= self.limit:
            self.mem.append(block)
            self.size += nbytes
            return
        if self.file is None:
            import tempfile

            self.file = tempfile.TemporaryFile()
        import pickle

        pickle.dump(block, self.file, protocol=pickle.HIGHEST_PROTOCOL)
        self.on_file += 1

    def __iter__(self):
        while self.mem:
            yield self.mem.pop(0)
        if self.file is not None:
            import pickle

            self.file.seek(0)
            for _ in range(self.on_file):
                yield pickle.load(self.file)
            self.file.close()
            self.file = None

    def close(self) -> None:
        self.mem = []
        if self.file is not None:
            self.file.close()
            self.file = None
