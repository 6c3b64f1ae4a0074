"""The reading sheet: entry grid, live results, phasor drawing, findings, caution banner, the draft kept at
every keystroke.  What its keys do is ``sheet_keys.py``."""

from __future__ import annotations

from datetime import date

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import Screen
from textual.widgets import Static

from ..core import phase_colours
from ..core.readings import validate_record
from ..core.reference import fill_reference
from ..core.results import analyze_records
from ..storage import drafts, rounds, sites, versions
from ..storage.db import BusyError, StorageError
from ..storage.ids import local_text, utc_now
from . import phasor_art
from .entry_grid import EntryGrid
from .key_strip import KeyStrip
from .palette import ALARM, INFO, MUTED, WARN
from .results_view import compare_text, findings_text, per_phase_text, reasons_text, results_text
from .safe import markup_safe
from .sheet_keys import SheetKeys
from .sheet_model import (
    LL,
    LL_MAG,
    LN,
    MODE_NAMES,
    _ln_to_ll,
    caution_lines,
    cells,
    draft_age,
    field_words,
    label_finding,
    modes_for,
    row_labels,
    understood,
)
from .text_panel import TextPanel

#: How long a keystroke's draft waits for another process's write lock before leaving it to the next key.
KEYSTROKE_WAIT_MS = 50


def live_result(values: dict, board: dict, site: dict, labels=("A", "B", "C")):
    """Core results for what is typed so far: ``(result or None, reasons)``.

    A cell that cannot be read is left out (the grid marks it red and the line
    under the grid says why).  ``reasons`` are the problems of the set as a
    whole, worded for the sheet (three line-to-line voltages that cannot form
    a triangle): with them there is no result, and the sheet says why at once
    instead of looking as if nothing were wrong.
    """
    record = {"system": board["system"], "nominal_v": board["nominal_v"], "standard": sites.board_standard(board, site)}
    record.update(values)
    clean, problems = validate_record(record)
    whole = [(f, r) for f, r in problems if "," in f]  # about several fields at once
    bad = {f for f, _ in problems}
    if bad:
        record = {k: v for k, v in record.items() if k not in bad}
        clean, problems = validate_record(record)
        if problems:  # e.g. an angle without its magnitude: drop those too
            record = {k: v for k, v in record.items() if k not in {f for f, _ in problems}}
            clean, problems = validate_record(record)
            if problems:
                whole += [(f, r) for f, r in problems if (f, r) not in whole]
    reasons = [f"{field_words(f, labels)}: {r}" for f, r in whole]
    if reasons:
        return None, reasons
    if not any(clean[f] is not None for f in ("va", "vb", "vab", "vbc", "ia", "ib")):
        return None, []
    return analyze_records([clean], sites.site_thresholds(site), labels)[0], []


class ReadingSheet(SheetKeys, Screen):
    """One board's readings: type, see the results live, save."""

    BINDINGS = [
        # Not priority bindings: those run before the keys typed just ahead of them reach the grid,
        # so "…7 F2" typed fast could save without the last digit.
        Binding("f2", "save", "Save"),
        Binding("ctrl+s", "save", "Save", show=False),
        Binding("f3", "previous", "Prev"),
        Binding("f4", "history", "Hist"),
        Binding("f5", "mode", "Mode"),
        Binding("f6", "panel", "Panel"),
        Binding("f7", "restore_draft", "Draft", show=False),
        Binding("f8", "note", "Note", show=False),
        Binding("f9", "instrument", "Instrument", show=False),
        Binding("ctrl+l", "clear_sheet", "Clear", show=False),
        Binding("f1", "help", "Help"),
        Binding("escape", "back", "Back"),
    ]

    def __init__(
        self,
        board_id: str,
        round_id: str | None = None,
        correcting: str | None = None,
        technician: str | None = None,
        today: date | None = None,
    ) -> None:
        """``today``: the day the arc-flash label's age is counted to (None: the computer's date)."""
        super().__init__()
        self.today = today
        self.label_finding: dict | None = None
        self._ready = False
        self.board_id = board_id
        self.round_id = round_id
        self.correcting = correcting
        self.technician = technician
        self.dirty = False
        self.result = None
        self.previous = None
        self.show_previous = False
        self.panel = "drawing"
        self.reasons: list[str] = []
        #: The reading's note (F8) and the instrument used (F9, kept for the next readings of this sheet).
        self.note: str | None = None
        self.instrument: str | None = None
        #: Typed values the current entry mode has no cell for (kept, saved in the draft, back with F5).
        self.aside: dict[str, str] = {}
        #: The draft found on opening, not yet restored (F7 restores it; typing does not lose it).
        self.offered_draft: dict | None = None

    # ---- layout -------------------------------------------------------------
    def compose(self) -> ComposeResult:
        yield Static(id="sheet-title")
        yield Static(id="caution")
        with Horizontal(id="sheet-body"):
            with Vertical(id="sheet-left"):
                yield EntryGrid(id="grid", on_change=self._changed, on_move=self._show_understood)
                yield TextPanel(id="understood")
                yield TextPanel(id="results")
            with Vertical(id="sheet-right"):
                yield TextPanel(id="panel")
                yield TextPanel(id="findings")
        yield TextPanel(id="status")
        yield KeyStrip()

    def on_mount(self) -> None:
        db = self.app.db
        self.board = sites.get_board(db, self.board_id)
        self.site = sites.get_site(db, self.board["site_id"])
        self.labels = sites.site_labels(self.site)
        self.colours = phase_colours.colours(sites.board_colour_set(self.board, self.site), "terminal")
        self.mode = modes_for(self.board["system"])[0]
        values = None
        if self.correcting:
            cur = versions.current_version(db, self.correcting)
            values = {
                k: str(v) for k, v in versions.inputs_of(cur).items() if k not in ("system", "standard", "nominal_v")
            }
            if any(k in values for k in ("vab_deg", "vbc_deg", "vca_deg")) and "va" not in values:
                self.mode = LL
            elif any(k in values for k in ("vab", "vbc", "vca")) and "va" not in values:
                self.mode = LL_MAG
        self._configure_grid(values or {})
        self.previous_row = versions.previous_reading(db, self.board_id, self.correcting)
        if self.previous_row:
            from ..report.export import analyze_rows

            self.previous = analyze_rows(
                [
                    {
                        **self.previous_row,
                        "thresholds_json": self.site["thresholds_json"],
                        "phase_labels": self.site["phase_labels"],
                    }
                ]
            )[0]
        self._update_title()
        self._update_caution()
        self.query_one(EntryGrid).focus()
        self._show_understood(self.query_one(EntryGrid).cells[0].field)
        self.recompute()
        if self.correcting:
            self.set_status(
                f"Correcting reading of {local_text(cur['taken_at'])} (version {cur['version']}). "
                "F2 saves a new version; you will be asked why."
            )
        else:
            draft = drafts.get_draft(db, self.board_id)
            if draft and any(str(v).strip() for v in draft.get("values", {}).values()):
                # Not a question that takes the keyboard: keys typed right after Enter go to the grid.
                self.offered_draft = draft
                self.set_status(
                    f"DRAFT kept for this board, typed {draft_age(draft)}: F7 puts it back on the "
                    "sheet. Typing here starts a new sheet; the draft is kept until you save.",
                    error=True,
                )
            else:
                self.set_status(
                    "Type the readings. Tab/Enter: next field; typing into a filled field "
                    "replaces it. F2: save. F1: help."
                )
        self._ready = True
        ahead, self.app.typed_ahead = getattr(self.app, "typed_ahead", []), []
        grid = self.query_one(EntryGrid)
        for key, character in ahead:  # typed right behind Enter on the board list: nothing is swallowed
            grid.type_key(key, character)

    def on_key(self, event) -> None:
        """Keys that reach the screen before the sheet is set up (typed right behind Enter) are kept and
        typed into the grid once it is."""
        if not self._ready:
            self.app.typed_ahead.append((event.key, event.character if event.is_printable else None))
            event.stop()
            event.prevent_default()

    def _configure_grid(self, values: dict) -> None:
        grid = self.query_one(EntryGrid)
        grid.configure(
            cells(self.mode, self.board["system"]),
            row_labels(self.mode, self.labels, self.board["system"]),
            self.colours,
            values,
        )

    def _update_title(self) -> None:
        b = self.board
        nominal = f"{b['nominal_v']:g} V" if b["nominal_v"] else "nominal ?"
        parts = [
            f"[b]{markup_safe(b['name'])}[/b]",
            markup_safe(self.site["name"]),
            f"{b['system']} {nominal}",
            MODE_NAMES[self.mode],
        ]
        if self.round_id:
            done, total = rounds.round_progress(self.app.db, self.round_id)
            parts.append(f"round {done}/{total} boards")
        if self.correcting:
            parts.insert(0, f"[b {WARN}]CORRECTING[/]")
        if self.app.db.read_only:
            parts.insert(0, f"[b {WARN}]READ-ONLY[/]")
        self.query_one("#sheet-title", Static).update(" · ".join(parts))

    def _update_caution(self) -> None:
        first, second, problem = caution_lines(self.board, self.site["label_review_years"], self.today)
        self.label_finding = label_finding(self.board, self.site["label_review_years"], self.today)
        banner = self.query_one("#caution", Static)
        banner.update(Text(first + "\n" + second))
        banner.set_class(problem, "label-problem")

    # ---- live results -----------------------------------------------------
    def _changed(self, field: str) -> None:
        """A cell was edited (called by the grid inside the key's handler)."""
        self.dirty = True
        self._show_understood(field)
        self.recompute()
        self.flush_draft(wait_ms=KEYSTROKE_WAIT_MS)  # the draft holds every field at every keystroke

    def _show_understood(self, field: str) -> None:
        grid = self.query_one(EntryGrid)
        msg, ok = understood(field, grid.values.get(field, ""), self.labels)
        self.query_one("#understood", TextPanel).update(Text(msg, INFO if ok else f"bold {ALARM}"))

    def recompute(self) -> None:
        grid = self.query_one(EntryGrid)
        self.result, self.reasons = live_result(grid.entered(), self.board, self.site, self.labels)
        if self.show_previous and self.previous_row is not None:
            shown = compare_text(
                self.previous_row, self.previous, grid.entered(), self.result, self.labels, self.board["system"]
            )
        elif self.reasons:
            shown = reasons_text(self.reasons)
        else:
            shown = results_text(self.result, self.board["system"], self.labels, grid.entered())
        self.query_one("#results", TextPanel).update(shown)
        self._draw_panel()
        self.query_one("#findings", TextPanel).update(
            reasons_text(self.reasons) if self.reasons else findings_text(self._findings(), detail=False)
        )

    def _findings(self) -> list[dict]:
        """The reading's findings, with the board's arc-flash label problem among them."""
        found = list(self.result["findings"]) if self.result else []
        if self.label_finding:
            found.append(self.label_finding)
        return sorted(found, key=lambda f: {"alarm": 0, "warning": 1, "info": 2}[f["severity"]])

    def _draw_panel(self) -> None:
        panel = self.query_one("#panel", TextPanel)
        if self.panel == "power":
            panel.update(per_phase_text(self.result, self.labels))
            return
        if self.panel == "findings":
            panel.update(reasons_text(self.reasons) if self.reasons else findings_text(self._findings(), detail=True))
            return
        w = max(20, panel.size.width or 38)
        h = max(6, panel.size.height or 10)
        if self.panel == "triangle":
            panel.update(self._triangle(w, h))
            return
        panel.update(phasor_art.draw(self._arrows(), w, h, self.result["rotation"] if self.result else None))

    def _triangle(self, w: int, h: int) -> Text:
        """The voltage triangle of the typed line-to-line magnitudes (or of the line-to-neutral phasors)."""
        from ..core.readings import ReadingError, parse_value

        grid = self.query_one(EntryGrid)
        try:
            ll = [parse_value(grid.values.get(f, ""), "V") for f in ("vab", "vbc", "vca")]
        except ReadingError:
            ll = [None]
        how = "typed"  # or computed from the line-to-neutral phasors
        if any(v is None for v in ll):
            conv = _ln_to_ll(grid.values)
            ll, how = ([m for m, _ in conv], "calc") if conv else (None, "")
        if not ll or self.board["system"] == "split-phase":
            return Text("Voltage triangle: type VAB, VBC and VCA (or VA, VB, VC with their angles).", MUTED)
        names = row_labels(LL, self.labels, self.board["system"])[:3]
        art = phasor_art.draw_triangle(*ll, w, h, labels=tuple(self.labels), colours=tuple(self.colours[:3]))
        art.append(f"\n{names[0]} {ll[0]:.0f} {names[1]} {ll[1]:.0f} {names[2]} {ll[2]:.0f} V {how}", MUTED)
        return art

    def _arrows(self) -> list:
        grid = self.query_one(EntryGrid)
        from ..core.readings import ReadingError, parse_value

        arrows = []

        def val(field, kind):
            try:
                return parse_value(grid.values.get(field, ""), kind)
            except ReadingError:
                return None

        phases = ("a", "b") if self.board["system"] == "split-phase" else ("a", "b", "c")
        for k, p in enumerate(phases):
            if self.mode == LN:
                m, d = val(f"v{p}", "V"), val(f"v{p}_deg", "deg")
                if d is None and p == "a" and m is not None:
                    nxt = val("vb_deg", "deg")
                    d = float(fill_reference(m, float("nan"), float("nan") if nxt is None else nxt))  # one rule
                    d = None if d != d else d
                label = self.labels[k]
            else:
                f = {"a": "vab", "b": "vbc", "c": "vca"}[p]
                m, d = val(f, "V"), val(f + "_deg", "deg")
                label = row_labels(self.mode, self.labels, self.board["system"])[k]
            if m is not None and d is not None:
                arrows.append(phasor_art.Arrow(label, m, d, self.colours[k], "V"))
            im, idg = val(f"i{p}", "A"), val(f"i{p}_deg", "deg")
            if im is not None and idg is not None:
                arrows.append(phasor_art.Arrow("I" + self.labels[k].lower(), im, idg, self.colours[k], "I"))
        return arrows

    def on_resize(self) -> None:
        self._draw_panel()

    def has_unsaved(self) -> bool:
        """Values typed on this sheet that are not saved as a reading."""
        return bool(self.dirty and (self.query_one(EntryGrid).entered() or self.aside))

    def flush_draft(self, wait_ms: int | None = None) -> bool:
        """Store what is typed as this board's draft now.  True if it is stored (or there is nothing to
        store); False if the draft could not be written, which the status line then says.  ``wait_ms``:
        at a keystroke, another process's long write (an import) is not waited for; the draft stays due
        and is stored at the next key or on the way out, which waits."""
        if self.correcting or not self.dirty:
            return True
        if self.app.db.read_only:
            self.set_status(
                "READ-ONLY database: what you type cannot be kept, neither as a reading nor as a "
                "draft. Write the values down.",
                error=True,
            )
            return False
        grid = self.query_one(EntryGrid)
        try:
            values = grid.entered()
            if values or self.aside:
                payload = {"mode": self.mode, "values": values, "typed_at": utc_now()}
                if self.aside:
                    payload["aside"] = self.aside
                if self.offered_draft is not None:  # not put back yet: kept inside the new draft
                    payload["earlier"] = {k: v for k, v in self.offered_draft.items() if k != "earlier"}
                drafts.save_draft(self.app.db, self.board_id, payload, wait_ms=wait_ms)
            elif self.offered_draft is not None:
                drafts.save_draft(self.app.db, self.board_id, self.offered_draft, wait_ms=wait_ms)
            else:
                # Emptied by hand or cleared after a save.
                drafts.clear_draft(self.app.db, self.board_id, wait_ms=wait_ms)
        except BusyError:
            return False  # not now: the next key or the way out keeps it
        except StorageError as e:  # a draft that cannot be kept must not stop the typing
            self.set_status(
                f"DRAFT NOT KEPT: {e}. Your typing is still on the screen: save it (F2) "
                "once the database can be written, or write the values down.",
                error=True,
            )
            return False
        return True

    def set_status(self, text: str, error: bool = False, ok: bool = False) -> None:
        st = self.query_one("#status", TextPanel)
        st.update(Text(text))
        st.set_class(error, "error")
        st.set_class(ok, "ok")
