"""What the reading sheet shows and in which order: entry modes, grid cells,
phase labels and colours, and the caution banner's text.  No widgets here, so
it is easy to test.
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date

from ..core.arc_flash import label_summary
from ..core.readings import FIELD_KIND, ReadingError, parse_value

LN, LL, LL_MAG = "ln", "ll", "ll-mag"
MODE_NAMES = {LN: "line-to-neutral", LL: "line-to-line + angles", LL_MAG: "line-to-line, no angles"}

#: Column titles of the grid (V magnitude, V angle, I magnitude, I angle).
COLUMNS = ("V", "V°", "I", "I°")


@dataclass(frozen=True)
class Cell:
    row: int  # 0..3: A, B, C, N
    col: int  # 0..3: COLUMNS
    field: str  # the reading field this cell fills


def modes_for(system: str) -> tuple[str, ...]:
    if system in ("delta",):
        return (LL_MAG, LL)
    if system == "split-phase":
        return (LN,)
    return (LN, LL, LL_MAG)


def cells(mode: str, system: str) -> list[Cell]:
    """The grid's cells in reading order (A, B, C; magnitude then angle; then N)."""
    phases = ("a", "b") if system == "split-phase" else ("a", "b", "c")
    ll = {"a": "vab", "b": "vbc", "c": "vca"}
    out = []
    for r, p in enumerate(phases):
        v = f"v{p}" if mode == LN else ll[p]
        out.append(Cell(r, 0, v))
        if mode != LL_MAG:
            out.append(Cell(r, 1, v + "_deg"))
        out.append(Cell(r, 2, f"i{p}"))
        out.append(Cell(r, 3, f"i{p}_deg"))
    if system != "delta":
        out.append(Cell(3, 2, "i_n"))
    return out


def row_labels(mode: str, labels: tuple[str, str, str], system: str) -> list[str]:
    if mode == LN:
        out = list(labels)
    else:
        a, b, c = labels
        out = [f"{a}-{b}", f"{b}-{c}", f"{c}-{a}"]
    if system == "split-phase":
        out[2] = ""
    return out + ["N"]


def understood(field: str, text: str) -> tuple[str, bool]:
    """How a typed value was understood, for the line under the grid.

    Returns (message, ok).
    """
    kind = FIELD_KIND[field]
    try:
        value = parse_value(text, kind)
    except ReadingError as e:
        return f"{field}: {e}", False
    if value is None:
        return f"{field}: empty", True
    if kind == "deg":
        norm = ((value + 180.0) % 360.0) - 180.0
        norm = 180.0 if norm == -180.0 else norm
        lag = "lagging" if norm < 0 else "leading" if norm > 0 else "on the reference"
        return f"{field} = {value:g}° (same as {norm:+g}°, {lag})", True
    return f"{field} = {value:g} {kind}", True


def caution_lines(board: dict, review_years: float, today: date | None = None) -> tuple[str, str, bool]:
    """The caution banner: (first line, second line, label problem?).

    The banner is always shown; the second line carries the board's arc-flash
    label data, or a warning that there is none or that it is out of date.
    """
    first = "⚠ LIVE: shock & arc flash. Qualified persons, permit, PPE. Local codes govern."
    label = label_summary(board, review_years, today or date.today())
    if label.status == "missing":
        return first, "⚠ NO ARC-FLASH LABEL recorded for this board: hazard unknown; check the board.", True
    parts = list(label.parts)
    if label.status == "undated":
        parts.append("⚠ label date not recorded")
    elif label.status == "unreadable date":
        parts.append(f"label date {label.dated!r} unreadable")
    else:
        parts.append(f"label {label.dated}")
        if label.status == "older than review interval":
            parts.append(f"⚠ OLDER THAN {review_years:g} YEARS: have it reviewed")
    return first, "Label: " + ", ".join(parts), label.problem
