"""Reading fields: what a reading may contain, how a typed value is understood,
and how records become the column arrays :func:`~fieldpad.core.analysis.analyze`
takes.  Pure: no file or database access.

What a typed value may look like (decided, and shown back on the sheet)
-----------------------------------------------------------------------
* A plain decimal number: ``277``, ``277.5``, ``-120``, ``1e3``.
* A decimal comma instead of a point: ``277,5`` reads as 277.5.  A comma
  followed by exactly three digits (``1,234``) is refused as ambiguous
  (thousands separator or decimal?); no thousands separators are accepted.
* A unit after the number when it fits the field: ``277V``, ``277 V``,
  ``13.8kV`` for voltages; ``12 A``, ``1.2kA`` for currents; ``-120°``,
  ``240deg`` for angles.  A unit that does not fit (``277A`` for a voltage)
  is refused.
* Angles may end in ``lag`` or ``lead``: ``30 lag`` is -30 degrees, ``30 lead``
  is +30 degrees (counter-clockwise positive).  ``240`` and ``-120`` are the
  same angle.
* NaN and infinity in any spelling, empty text inside a number, and anything
  else are refused with the reason.
"""

from __future__ import annotations

import math
import re

import numpy as np

from .fields import (
    EXPECTED_ROTATIONS,
    I_PH,
    NUMERIC_FIELDS,
    PURPOSES,
    RATING_FIELDS,
    STANDARDS,
    SYSTEMS,
    V_LL,
    V_LN,
    VI_FIELDS,
)
from .nominal import ANSI, IEC

VOLTS, AMPS, DEGREES = "V", "A", "deg"

#: Largest magnitude that is plausible for the field (common practice: a
#: portable meter on low and medium voltage boards through PTs and CTs).
MAX_VOLTS = 40_000.0
MAX_AMPS = 100_000.0
MAX_ABS_DEG = 360.0

FIELD_KIND = {"nominal_v": VOLTS, "i_n": AMPS}
for _f in V_LN + V_LL:
    FIELD_KIND[_f] = VOLTS
    FIELD_KIND[_f + "_deg"] = DEGREES
for _f in I_PH:
    FIELD_KIND[_f] = AMPS
    FIELD_KIND[_f + "_deg"] = DEGREES

#: Every field ``fieldpad compute`` accepts (public contract), plus ``standard``.
READING_FIELDS = ("system",) + NUMERIC_FIELDS + ("standard",)
#: Board inputs (README "Board inputs"): accepted where the caller asks (``board_inputs=True``:
#: ``fieldpad compute``), not stored with a reading.
BOARD_FIELD_KIND = {**{f: AMPS for f in RATING_FIELDS}, **{f: DEGREES for f in VI_FIELDS}}
BOARD_TEXT_FIELDS = {"purpose": PURPOSES, "expected_rotation": EXPECTED_ROTATIONS}

#: Nominal voltages that are IEC-world values; any other nominal defaults to ANSI.
IEC_NOMINALS = {220.0, 230.0, 380.0, 400.0, 415.0, 660.0, 690.0, 1000.0}

# ASCII digits and blanks only: \d and \s would also take other scripts' digits and separators
# such as U+001F that float() does not accept.
_PLAIN = re.compile(r"[ \t]*[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?[ \t]*")
_NUMBER = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_SUFFIX = {
    VOLTS: {"": 1.0, "v": 1.0, "kv": 1000.0},
    AMPS: {"": 1.0, "a": 1.0, "ka": 1000.0},
    DEGREES: {
        "": 1.0,
        "°": 1.0,
        "deg": 1.0,
        "lead": 1.0,
        "lag": -1.0,
        "°lead": 1.0,
        "°lag": -1.0,
        "deglead": 1.0,
        "deglag": -1.0,
    },
}
_UNIT_WORD = {VOLTS: "a voltage", AMPS: "a current", DEGREES: "an angle"}


class ReadingError(ValueError):
    """A value that cannot be used; ``str()`` is the reason, for a person."""


def parse_value(value, kind: str):
    """Understand one typed or file value for a field of the given kind.

    Parameters
    ----------
    value : str, int, float or None
    kind : {"V", "A", "deg"}

    Returns
    -------
    float or None
        None when the value is empty (not entered).

    Raises
    ------
    ReadingError
        With the reason, e.g. ``"'abc' is not a number"``.

    Examples
    --------
    >>> parse_value("277,5 V", "V"), parse_value("30 lag", "deg"), parse_value("13.8kV", "V")
    (277.5, -30.0, 13800.0)
    """
    if value is None:
        return None
    if isinstance(value, bool):
        raise ReadingError(f"{str(value).lower()} is not a number")
    if isinstance(value, (int, float)):
        x = float(value)
    elif isinstance(value, str) and _PLAIN.fullmatch(value):
        x = float(value)  # the common case: a plain decimal number
    elif isinstance(value, str):
        if any(ord(c) < 32 and c not in " \t" or 0x7F <= ord(c) <= 0x9F for c in value):
            raise ReadingError(f"{value!r} contains a control character")
        text = value.strip()
        if not text:
            return None
        low = text.lower().replace(" ", "")
        if low.lstrip("+-") in {"nan", "inf", "infinity", "-nan"} or "nan" in low or "inf" in low:
            raise ReadingError(f"{text!r} is not a finite number")
        m = _NUMBER.match(low.replace(",", "."))
        if "," in low:
            if "." in low or low.count(",") > 1:
                raise ReadingError(f"{text!r}: use one decimal separator, no thousands separators")
            if re.search(r",\d{3}(?!\d)", low):
                raise ReadingError(
                    f"{text!r} is ambiguous (thousands separator or decimal comma?): type it with a decimal point"
                )
        if not m:
            raise ReadingError(f"{text!r} is not a number")
        rest = low[m.end() :]
        factor = _SUFFIX[kind].get(rest)
        if factor is None:
            raise ReadingError(
                f"{text!r}: '{text[len(text) - len(rest) :].strip() or rest}' is not a unit for {_UNIT_WORD[kind]}"
            )
        x = float(m.group(0)) * factor
    else:
        raise ReadingError(f"{value!r} is not a number")
    if not math.isfinite(x):
        raise ReadingError(f"{value!r} is not a finite number")
    if kind in (VOLTS, AMPS):
        limit = MAX_VOLTS if kind == VOLTS else MAX_AMPS
        if x < 0:
            raise ReadingError(f"{x:g} is negative: a magnitude cannot be below 0 (enter the angle separately)")
        if x > limit:
            raise ReadingError(f"{x:g} {kind} is beyond {limit:g} {kind}, too large for this field")
    elif abs(x) > MAX_ABS_DEG:
        raise ReadingError(f"{x:g} degrees is outside -360..360")
    return x


def _field_name(key) -> str:
    """A field name as shown in a message: quoted when empty or odd (a ':' or a control character)."""
    key = str(key)
    if re.fullmatch(r"[A-Za-z0-9_ .()-]+", key):
        return key
    return "(empty field name)" if key == "" else repr(key)[:60]


def _empty(value) -> bool:
    return value is None or (isinstance(value, str) and not value.strip())


def default_standard(nominal_v) -> str:
    """ANSI C84.1 unless the nominal is an IEC-world value (common practice)."""
    return IEC if nominal_v is not None and float(nominal_v) in IEC_NOMINALS else ANSI


def validate_record(record: dict, extra_fields=(), board_inputs: bool = False) -> tuple[dict, list[tuple[str, str]]]:
    """Check one reading record.

    Parameters
    ----------
    record : dict
        Field name -> value (text or number); missing or empty means not entered.
    extra_fields : iterable of str
        Further field names the caller accepts and keeps as text (e.g. ``site``).
    board_inputs : bool
        Also accept the board inputs (:data:`BOARD_FIELD_KIND`, ``purpose``, ``expected_rotation``).

    Returns
    -------
    (clean, problems)
        ``clean`` maps numeric fields to float or None, ``system`` and
        ``standard`` to their names, extras to stripped text.  ``problems``
        is a list of ``(field, reason)``; empty when the record is usable.
    """
    problems: list[tuple[str, str]] = []
    clean: dict = {}
    extra = set(extra_fields)
    board = set(BOARD_FIELD_KIND) | set(BOARD_TEXT_FIELDS) if board_inputs else set()
    for key in record:
        if key not in FIELD_KIND and key not in ("system", "standard") and key not in extra and key not in board:
            problems.append((_field_name(key), "unknown field"))
    system = record.get("system")
    system = "wye" if system is None or str(system).strip() == "" else str(system).strip().lower()
    if system not in SYSTEMS:
        problems.append(("system", f"unknown system {system!r} (use one of: {', '.join(SYSTEMS)})"))
        system = "wye"
    clean["system"] = system
    for name, kind in FIELD_KIND.items():
        try:
            clean[name] = parse_value(record.get(name), kind)
        except ReadingError as e:
            problems.append((name, str(e)))
            clean[name] = None
    for name in extra:
        v = record.get(name)
        clean[name] = None if v is None or str(v).strip() == "" else str(v).strip()

    for f in V_LN + V_LL + I_PH:
        if clean[f + "_deg"] is not None and _empty(record.get(f)):
            problems.append((f + "_deg", f"angle given without its magnitude {f}"))
    if clean["nominal_v"] is not None and clean["nominal_v"] == 0:
        problems.append(("nominal_v", "nominal voltage cannot be 0"))
    if system == "split-phase":
        for f in ("vc", "vc_deg", "ic", "ic_deg", "vbc", "vca", "vbc_deg", "vca_deg"):
            if clean[f] is not None:
                problems.append((f, "a split-phase system has legs A and B only"))
    if system == "delta":
        for f in V_LN:
            if clean[f] is not None:
                problems.append((f, "a 3-wire delta is measured line-to-line: enter vab, vbc, vca"))
    ll = [clean[f] for f in V_LL]
    if all(v is not None for v in ll):
        a, b, c = ll
        tol = 1e-9 * (a + b + c)
        if not (a <= b + c + tol and b <= a + c + tol and c <= a + b + tol):
            problems.append(
                (
                    "vab,vbc,vca",
                    f"{a:g}, {b:g}, {c:g} V cannot form a triangle (each line-to-line "
                    "voltage must be at most the sum of the other two): "
                    "re-read the line-to-line voltages",
                )
            )
    if board_inputs:
        _board_inputs(record, clean, problems)
    std = record.get("standard")
    std = None if std is None or str(std).strip() == "" else str(std).strip().lower()
    if std is not None and std not in STANDARDS:
        problems.append(("standard", f"unknown voltage standard {std!r} (use ansi or iec)"))
        std = None
    clean["standard"] = std or default_standard(clean["nominal_v"])
    return clean, problems


def _board_inputs(record: dict, clean: dict, problems: list) -> None:
    for name, kind in BOARD_FIELD_KIND.items():
        try:
            clean[name] = parse_value(record.get(name), kind)
        except ReadingError as e:
            problems.append((name, str(e)))
            clean[name] = None
    for name in RATING_FIELDS:
        if clean[name] is not None and clean[name] <= 0:
            problems.append((name, "a rating must be above 0 A"))
    for f, vi in zip(I_PH, VI_FIELDS):
        if clean[vi] is not None and _empty(record.get(f)):
            problems.append((vi, f"displacement given without its magnitude {f}"))
        if clean[vi] is not None and clean[f + "_deg"] is not None:
            problems.append(
                (vi, f"give either {f}_deg (against the reference) or {vi} (against its own voltage), not both")
            )
    for name, choices in BOARD_TEXT_FIELDS.items():
        v = record.get(name)
        v = None if v is None or str(v).strip() == "" else str(v).strip().lower()
        if v is not None and v not in choices:
            problems.append((name, f"unknown {name.replace('_', ' ')} {v!r} (use one of: {', '.join(choices)})"))
            v = None
        clean[name] = v


def records_to_columns(clean_records: list[dict]):
    """Column arrays for :func:`~fieldpad.core.analysis.analyze` from clean records.

    Returns
    -------
    (cols, system, standard)
    """
    n = len(clean_records)
    cols = {}
    for name in NUMERIC_FIELDS:
        cols[name] = np.array([r.get(name) for r in clean_records], dtype=float).reshape(n)
    for name in BOARD_FIELD_KIND:
        if any(r.get(name) is not None for r in clean_records):
            cols[name] = np.array([r.get(name) for r in clean_records], dtype=float).reshape(n)
    for name, choices in BOARD_TEXT_FIELDS.items():
        if any(r.get(name) is not None for r in clean_records):
            cols[name] = np.array([choices.get(r.get(name), np.nan) for r in clean_records], dtype=float).reshape(n)
    system = np.array([SYSTEMS[r.get("system") or "wye"] for r in clean_records], dtype=np.int8).reshape(n)
    standard = np.array([STANDARDS[r.get("standard") or ANSI] for r in clean_records], dtype=np.int8).reshape(n)
    return cols, system, standard


def stored_text(value, limit: int = 10_000) -> tuple[str | None, str | None]:
    """The one rule for text a person gave (site, board, technician, round, instrument, note), whether
    typed in the app, imported or merged: surrounding white space is dropped, an empty text is None,
    at most ``limit`` characters, no NUL.  Anything else is kept exactly as given (control characters
    too: they are made visible where text is shown, and neutralised in exports), so every export
    imports back.  Returns ``(text, None)`` or ``(None, reason)``.
    """
    if value is None:
        return None, None
    text = str(value).strip()
    if not text:
        return None, None
    if "\x00" in text:
        return None, "contains a NUL character"
    if len(text) > limit:
        return None, f"is {len(text)} characters; at most {limit}"
    return text, None
