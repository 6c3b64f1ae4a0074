"""What the reading sheet shows and in which order: entry modes, grid cells,
phase labels and colours, the side panels, the caution banner's text and how
old a kept draft is.  No widgets here, so it is easy to test.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, date, datetime

from ..core.arc_flash import label_summary
from ..core.readings import FIELD_KIND, ReadingError, parse_value
from ..core.reference import REFERENCE_DEG, is_reference
from ..storage.ids import local_text

LN, LL, LL_MAG = "ln", "ll", "ll-mag"
MODE_NAMES = {LN: "line-to-neutral", LL: "line-to-line + angles", LL_MAG: "line-to-line, no angles"}
#: The side panels, in the order F6 shows them.
PANELS = ("drawing", "triangle", "power", "findings")

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
    return out + ["" if system == "delta" else "N"]  # a 3-wire delta has no neutral row


def field_words(field: str, labels=("A", "B", "C")) -> str:
    """A reading field as the technician reads it on the sheet: ``vb_deg`` -> "VB angle", ``vab`` -> "VA-B",
    with the site's phase labels (``L1``...).  Several fields joined by commas are worded one by one."""
    if "," in field:
        return ", ".join(field_words(f, labels) for f in field.split(","))
    idx = {"a": 0, "b": 1, "c": 2}
    base, angle = (field[:-4], True) if field.endswith("_deg") else (field, False)
    if base == "i_n":
        words = "IN (neutral)"
    elif base[0] in "vi" and len(base) == 2 and base[1] in idx:
        words = base[0].upper() + labels[idx[base[1]]]
    elif base[0] == "v" and len(base) == 3 and base[1] in idx and base[2] in idx:
        la, lb = labels[idx[base[1]]], labels[idx[base[2]]]
        words = f"V{la}{lb}" if len(la) == 1 else f"V{la}-{lb}"
    else:
        return field.replace("_", " ")
    return words + (" angle" if angle else "")


def understood(field: str, text: str, labels=("A", "B", "C")) -> tuple[str, bool]:
    """How a typed value was understood, for the line under the grid.

    Returns (message, ok).
    """
    kind = FIELD_KIND[field]
    name = field_words(field, labels)
    try:
        value = parse_value(text, kind)
    except ReadingError as e:
        return f"{name}: {e}", False
    if value is None:
        if is_reference(field):
            return f"{name}: blank = {REFERENCE_DEG:g}°, the reference", True
        return f"{name}: empty", True
    if kind == "deg":
        norm = ((value + 180.0) % 360.0) - 180.0
        norm = 180.0 if norm == -180.0 else norm
        lag = "lagging" if norm < 0 else "leading" if norm > 0 else "on the reference"
        return f"{name} = {value:g}° (same as {norm:+g}°, {lag})", True
    return f"{name} = {value:g} {kind}", True


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
    # The warning first, in words: the end of this line is cut at 80 columns.
    if label.status == "undated":
        return first, "⚠ LABEL NOT DATED: have it checked. Label: " + ", ".join(parts), True
    if label.status == "unreadable date":
        return first, f"⚠ LABEL DATE {label.dated!r} UNREADABLE. Label: " + ", ".join(parts), True
    if label.status == "older than review interval":
        return (
            first,
            (
                f"⚠ LABEL EXPIRED: dated {label.dated}, older than {review_years:g} years; have it "
                "reviewed. Label: " + ", ".join(parts)
            ),
            True,
        )
    parts.append(f"label {label.dated}")
    return first, "Label: " + ", ".join(parts), label.problem


def label_finding(board: dict, review_years: float, today: date | None = None) -> dict | None:
    """The arc-flash label's problem as a finding of the sheet (shown with the reading's findings), or None."""
    label = label_summary(board, review_years, today or date.today())
    if not label.problem:
        return None
    what = {
        "missing": "No arc-flash label is recorded for this board: the hazard is unknown",
        "undated": "The arc-flash label has no date recorded",
        "unreadable date": f"The arc-flash label date {label.dated!r} cannot be read",
        "older than review interval": f"The arc-flash label is dated {label.dated}, older than the "
        f"{review_years:g}-year review interval (expired)",
    }[label.status]
    return {
        "code": "ARC_FLASH_LABEL",
        "severity": "warning",
        "message": what + ": check the board's label and have the study reviewed before relying on it.",
        "value": None,
        "threshold": None,
        "unit": "",
        "phase": None,
        "source": "NFPA 70E 130.5(G) review at least every 5 years (from memory; local rules govern)",
    }


LN_V, LL_V = ("va", "vb", "vc"), ("vab", "vbc", "vca")


def switch_mode(
    new_mode: str, values: dict, aside: dict, new_fields: list[str], labels=("A", "B", "C")
) -> tuple[dict, dict, str]:
    """Values for the grid after F5, and what became of the typed voltages.

    ``values``: the grid's cells as typed (field -> text); ``aside``: values kept from
    earlier modes that the current mode has no cell for; ``new_fields``: the new
    mode's cells.  Nothing typed is thrown away: a value with no cell in the new
    mode is kept aside (and comes back when the mode that has it returns);
    line-to-neutral voltages typed with all their angles are converted to
    line-to-line (Vab = Va − Vb, ``core.phasors.line_to_line``) when the new
    mode's voltage cells are empty.  Returns ``(values, aside, note)``; the
    note says in words what happened, for the status line.
    """
    aside = dict(aside)
    new = set(new_fields)
    for f, v in values.items():
        if f not in new and v.strip():
            aside[f] = v
    out, restored = {}, []
    for f in new_fields:
        if values.get(f, "").strip():
            out[f] = values[f]
        elif aside.get(f, "").strip():
            out[f] = aside.pop(f)
            restored.append(f)
        else:
            out[f] = ""
    converted = []
    if new_mode != LN and not any(out.get(f, "").strip() for f in LL_V):
        ll = _ln_to_ll(values)
        if ll is not None:
            for k, f in enumerate(LL_V):
                out[f] = f"{ll[k][0]:.1f}"
                converted.append(f)
                if f + "_deg" in new:
                    out[f + "_deg"] = f"{ll[k][1]:.1f}"
    notes = []
    if converted:
        notes.append(
            f"{', '.join(field_words(f, labels) for f in converted)} computed from the line-to-neutral "
            "values typed (check them against the meter)"
        )
    if restored:
        notes.append(f"{', '.join(field_words(f, labels) for f in restored)} typed earlier brought back")
    kept = [f for f in aside if f not in new]
    if kept:
        notes.append(
            f"{', '.join(field_words(f, labels) for f in kept)} kept aside: not saved in this mode, back with F5"
        )
    return out, aside, "; ".join(notes)


def _ln_to_ll(values: dict):
    """(magnitude V, angle °) of Vab, Vbc, Vca from typed line-to-neutral phasors, or None if any is missing."""
    import numpy as np

    from ..core.phasors import angle_deg, line_to_line, polar
    from ..core.reference import fill_reference

    try:
        mags = [parse_value(values.get(f"v{p}", ""), "V") for p in "abc"]
        angs = [parse_value(values.get(f"v{p}_deg", ""), "deg") for p in "abc"]
    except ReadingError:
        return None
    m = np.array([np.nan if x is None else x for x in mags])
    d = np.array([np.nan if x is None else x for x in angs])
    d[0] = fill_reference(m[0], d[0], d[1])  # a blank VA angle, by the one rule
    if not np.isfinite(m).all() or not np.isfinite(d).all():
        return None
    ll = line_to_line(polar(m, d))
    return [(float(abs(z)), float(angle_deg(z))) for z in ll]


def draft_age(draft: dict, now: datetime | None = None) -> str:
    """When a draft was typed, in words: "at 2026-12-02 14:02 (25 min ago)"."""
    typed = draft.get("typed_at")
    if not typed:
        return "at a time not recorded"
    try:
        then = datetime.fromisoformat(typed.replace("Z", "+00:00"))
    except ValueError:
        return "at a time not recorded"
    minutes = int(((now or datetime.now(UTC)) - then).total_seconds() // 60)
    if minutes < 1:
        ago = "just now"
    elif minutes < 120:
        ago = f"{minutes} min ago"
    elif minutes < 48 * 60:
        ago = f"{minutes // 60} h ago"
    else:
        ago = f"{minutes // 1440} days ago"
    return f"at {local_text(typed)} ({ago})"


def incomplete_phases(entered: dict, system: str, labels) -> str:
    """What a reading leaves out that its system has, in words ("VC, IC"): a phase whose voltage is missing
    while another's is typed, and likewise for the currents; "" when nothing is missing.  Line-to-line
    voltages count where the line-to-neutral ones are not typed."""
    phases = 2 if system == "split-phase" else 3
    groups = [("va", "vb", "vc")[:phases], ("ia", "ib", "ic")[:phases]]
    if system != "split-phase" and not any(entered.get(f) for f in ("va", "vb", "vc")):
        groups[0] = ("vab", "vbc", "vca")
    if system == "delta":
        groups[0] = ("vab", "vbc", "vca")
    out = []
    for group in groups:
        given = [f for f in group if str(entered.get(f) or "").strip()]
        if given and len(given) < len(group):
            out += [field_words(f, labels) for f in group if f not in given]
    return ", ".join(out)
