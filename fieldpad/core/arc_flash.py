"""A board's arc-flash label as recorded: what it says, and whether it can be relied on as a record.

The label's values come from the board's own study (NFPA 70E art. 130.5(H) asks for the label; IEEE 1584
is the usual calculation); fieldpad only repeats them and never computes a hazard.  A label older than the
site's review interval is flagged: NFPA 70E 130.5(G) asks for the study to be reviewed at least every five
years (from memory; local rules govern)."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date


@dataclass(frozen=True)
class LabelSummary:
    parts: tuple[str, ...]  # what the label says, e.g. ("5 cal/cm² at 455 mm", "boundary 1100 mm", "PPE 2")
    status: str  # "missing", "undated", "unreadable date", "older than review interval" or "current"
    dated: str | None

    @property
    def problem(self) -> bool:
        return self.status != "current"


def label_summary(board: dict, review_years: float, today: date) -> LabelSummary:
    """The label data of ``board`` (a board row) and its status on ``today``."""
    e = board.get("af_incident_energy_cal_cm2")
    ppe = board.get("af_ppe")
    dated = board.get("af_label_date")
    if e is None and not ppe:
        return LabelSummary((), "missing", dated)
    parts = []
    if e is not None:
        wd = board.get("af_working_distance_mm")
        parts.append(f"{e:g} cal/cm²" + (f" at {wd:g} mm" if wd else ""))
    if board.get("af_boundary_mm"):
        parts.append(f"boundary {board['af_boundary_mm']:g} mm")
    parts.append(f"PPE {ppe}" if ppe else "PPE not posted")
    if not dated:
        status = "undated"
    else:
        try:
            age_years = (today - date.fromisoformat(dated)).days / 365.25
        except ValueError:
            status = "unreadable date"
        else:
            status = "older than review interval" if age_years > review_years else "current"
    return LabelSummary(tuple(parts), status, dated)
