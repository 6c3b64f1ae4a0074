"""What the reading sheet's keys do (the keys themselves: ``ReadingSheet.BINDINGS`` in ``sheet.py``): save
and save a correction (F2), the previous reading (F3), history (F4), entry mode (F5), the side panel (F6),
the draft put back (F7), note (F8), instrument (F9), clear (Ctrl+L), help (F1) and back (Esc).

``SheetKeys`` is part of ``ReadingSheet`` (a mixin: the screen's state, status line and grid are the
sheet's own)."""

from __future__ import annotations

import time

from ..storage import versions
from ..storage.db import StorageError
from ..storage.ids import local_text, utc_now
from ..storage.rows import ValidationError
from .dialogs import Ask, AskReason, AskText, help_page
from .entry_grid import EntryGrid
from .messages import OpenHistory
from .safe import short_id
from .sheet_model import (
    MODE_NAMES,
    PANELS,
    cells,
    draft_age,
    field_words,
    incomplete_phases,
    modes_for,
    switch_mode,
)


class SheetKeys:
    """The sheet's actions, one per key (see the module's docstring)."""

    def action_restore_draft(self) -> None:
        if self.offered_draft is None:
            self.set_status("No draft to put back for this board.")
            return
        if self.query_one(EntryGrid).entered():
            self.app.push_screen(
                Ask(
                    f"Put back the draft typed {draft_age(self.offered_draft)}? What is on the "
                    "sheet now is kept as the next draft to offer. (y/n)"
                ),
                self._restore_draft,
            )
        else:
            self._restore_draft(True)

    def _restore_draft(self, yes: bool | None) -> None:
        if not yes or self.offered_draft is None:
            return
        draft, grid = self.offered_draft, self.query_one(EntryGrid)
        now = grid.entered()
        self.offered_draft = (
            {"mode": self.mode, "values": now, "aside": self.aside, "typed_at": utc_now()} if now else None
        )
        self.mode = draft.get("mode", self.mode)
        self.aside = dict(draft.get("aside") or {})
        self._configure_grid(draft.get("values", {}))
        self.dirty = True
        self._update_title()
        self.recompute()
        self.flush_draft()
        self.set_status(
            f"Draft typed {draft_age(draft)} put back: check every value before saving "
            "(typing into a field replaces its value)."
        )

    _incomplete_ok = False

    def _save_incomplete(self, yes: bool) -> None:
        if yes:
            self._incomplete_ok = True
            self.action_save()
        else:
            self.set_status("Not saved: type the missing values (Tab), then F2.")

    def action_save(self) -> None:
        grid = self.query_one(EntryGrid)
        problems = grid.problems()
        if problems:
            f, reason = next(iter(problems.items()))
            self.set_status(
                f"NOT SAVED: {field_words(f, self.labels)}: {reason}. Fix the red field(s); nothing was lost.",
                error=True,
            )
            grid.move_to(next(k for k, c in enumerate(grid.cells) if c.field == f))
            return
        if not grid.entered():
            self.set_status("Nothing to save: the sheet is empty.", error=True)
            return
        missing = incomplete_phases(grid.entered(), self.board["system"], self.labels)
        if missing and not self._incomplete_ok:
            # A phase left out by a hurried Tab: asked, not refused (a dead phase may be read as 0).
            self.app.push_screen(Ask(f"{missing} not entered. Save this reading anyway? (y/n)"), self._save_incomplete)
            return
        self._incomplete_ok = False
        if self.correcting:
            self.app.push_screen(AskReason("Why is this reading corrected?"), self._save_correction)
            return
        try:
            saved = versions.save_reading(
                self.app.db,
                self.board_id,
                grid.entered(),
                technician=self.technician,
                round_id=self.round_id,
                instrument=self.instrument,
                note=self.note,
            )
        except ValidationError as e:
            self.set_status(f"NOT SAVED: {e}. Nothing was lost.", error=True)
            return
        except StorageError as e:  # the disk, permissions: say so, keep the typing (and the draft)
            if self.app.db.read_only:
                self.set_status(
                    f"NOT SAVED: {e}. Write the values down, or open a database that can be written.", error=True
                )
                return
            kept = self.flush_draft()
            self.set_status(
                f"NOT SAVED: {e}. What you typed is still here"
                + (
                    "."
                    if kept
                    else ", but it could not be kept as a draft either: do not leave this sheet "
                    "until it is saved or written down."
                ),
                error=True,
            )
            return
        self._after_save(
            f"✔ SAVED {time.strftime('%H:%M:%S')} (reading {short_id(saved.reading_id)}). Sheet cleared; F3 shows it."
        )

    def _save_correction(self, reason: str | None) -> None:
        if not reason:
            self.set_status("Correction not saved (no reason given).", error=True)
            return
        grid = self.query_one(EntryGrid)
        try:
            saved = versions.correct_reading(
                self.app.db, self.correcting, grid.entered(), reason=reason, by=self.technician, note=self.note
            )
        except StorageError as e:
            self.set_status(f"NOT SAVED: {e}. What you typed is still here.", error=True)
            return
        self.correcting = None
        self._after_save(
            f"✔ SAVED {time.strftime('%H:%M:%S')}: correction = version {saved.version}; earlier version kept."
        )

    def _after_save(self, message: str) -> None:
        grid = self.query_one(EntryGrid)
        self.previous_row = versions.previous_reading(self.app.db, self.board_id)
        self.previous = self.result
        self.aside = {}
        self.note = None  # a note belongs to one reading; the instrument stays for the next
        self.offered_draft = None  # a reading is saved: the draft offered on opening is done with
        grid.clear()  # through _changed: the results are recomputed for the empty sheet
        self.dirty = False
        self._update_title()
        self.set_status(message, ok=True)

    def action_previous(self) -> None:
        if self.previous_row is None:
            self.set_status("No earlier reading of this board.")
            return
        self.show_previous = not self.show_previous
        self.recompute()
        when = local_text(self.previous_row["taken_at"])
        self.set_status(
            f"Previous reading ({when}) per phase beside what is typed, with the change. F3: back to the results."
            if self.show_previous
            else "Results shown (F3: previous reading)."
        )

    def action_history(self) -> None:
        self.post_message(OpenHistory(self.board_id))

    def action_mode(self) -> None:
        modes = modes_for(self.board["system"])
        if len(modes) == 1:
            self.set_status(f"A {self.board['system']} board has one entry mode.")
            return
        new_mode = modes[(modes.index(self.mode) + 1) % len(modes)]
        grid = self.query_one(EntryGrid)
        values, self.aside, note = switch_mode(
            new_mode, grid.values, self.aside, [c.field for c in cells(new_mode, self.board["system"])], self.labels
        )
        self.mode = new_mode
        self._configure_grid(values)
        self._update_title()
        self.recompute()
        self.flush_draft()
        self.set_status(f"Entry mode: {MODE_NAMES[self.mode]}." + (f" {note}." if note else ""))

    def action_note(self) -> None:
        self.app.push_screen(
            AskText("Note for this reading (saved with it; empty = none):", required=False, value=self.note or ""),
            self._set_note,
        )

    def _set_note(self, text: str | None) -> None:
        if text is not None:
            self.note = text or None
            self.set_status(f"Note for this reading: {text}" if text else "No note for this reading.")

    def action_instrument(self) -> None:
        self.app.push_screen(
            AskText(
                "Instrument used (make, model, serial), kept for the next readings:",
                required=False,
                value=self.instrument or "",
            ),
            self._set_instrument,
        )

    def _set_instrument(self, text: str | None) -> None:
        if text is not None:
            self.instrument = text or None
            self.set_status(f"Instrument: {text}" if text else "No instrument recorded.")

    def action_clear_sheet(self) -> None:
        grid = self.query_one(EntryGrid)
        if not grid.entered() and not self.aside:
            self.set_status("The sheet is already empty.")
            return
        self.app.push_screen(Ask("Clear every value typed on this sheet? Nothing saved is touched. (y/n)"), self._clear)

    def _clear(self, yes: bool | None) -> None:
        if yes:
            self.aside = {}
            self.query_one(EntryGrid).clear()
            self.set_status("Sheet cleared. Saved readings are untouched (F4: history).")

    def action_panel(self) -> None:
        self.panel = PANELS[(PANELS.index(self.panel) + 1) % len(PANELS)]
        self._draw_panel()

    def action_help(self) -> None:
        self.app.push_screen(help_page())

    def action_back(self) -> None:
        if not self.has_unsaved():
            self.app.pop_screen()
        elif self.flush_draft():
            self.app.push_screen(
                Ask(
                    "Leave this sheet? What is typed is NOT saved as a reading "
                    "(it is kept as a draft and offered back). (y/n)"
                ),
                self._leave,
            )
        else:
            self.app.push_screen(
                Ask(
                    "Leave this sheet and LOSE what is typed? It is not saved, and it "
                    "could not be kept as a draft (see the status line). (y/n)"
                ),
                self._leave,
            )

    def _leave(self, yes: bool | None) -> None:
        if yes:
            self.app.pop_screen()
