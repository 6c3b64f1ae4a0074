"""The entry grid: one focusable widget that owns every cell of the sheet.

Why one widget: with a separate Input per cell, characters that arrive in the
same burst as Tab or Enter can land in the field being left, because focus
moves after the key is handled.  Here the grid keeps its own cursor and moves
it inside the same key handler, so every following character lands in the
cell the technician moved to, however fast the keys arrive.

Entering a cell (Tab, Shift+Tab, Enter, arrows, a restored draft) selects its
value: the next character typed replaces it, Backspace edits it.  The
reference angle (VA°, or Vab° line-to-line) is skipped by Tab, Shift+Tab and
Enter: left blank it is 0° by the one rule of ``core.reference``; the arrow
keys still reach it.
"""

from __future__ import annotations

from rich.text import Text
from textual.reactive import reactive
from textual.widget import Widget

from ..core.readings import FIELD_KIND, ReadingError, parse_value
from ..core.reference import REFERENCE_DEG, is_reference
from .palette import ON_ALARM
from .sheet_model import COLUMNS, Cell

MAX_CELL = 16
#: Columns of the drawn grid: the row name, then each cell (value right-aligned).
NAME_W, CELL_W = 5, 8


class EntryGrid(Widget, can_focus=True):
    """Cells for V, V angle, I, I angle per phase, and the neutral current."""

    cursor: reactive[int] = reactive(0)

    def __init__(self, *, on_change, on_move, **kwargs) -> None:
        """``on_change(field)`` (a cell's text changed) and ``on_move(field)`` (the cursor moved) are called
        at once inside the key's handler, not through a posted message: the owner's updates then reach the
        screen in the same frame as the typed character (a message takes a few more turns of the event
        loop; on the sheet that cost a frame or two per keystroke)."""
        super().__init__(**kwargs)
        self._on_change = on_change
        self._on_move = on_move
        self.cells: list[Cell] = []
        self.values: dict[str, str] = {}
        self.row_names: list[str] = []
        self.row_colours: list[str] = []
        #: True while the cursor's cell was just entered: the next character replaces its value.
        self.fresh = True

    def configure(
        self, cells: list[Cell], row_names: list[str], row_colours: list[str], values: dict | None = None
    ) -> None:
        self.cells = cells
        self.row_names = row_names
        self.row_colours = row_colours
        keep = values if values is not None else self.values
        self.values = {c.field: keep.get(c.field, "") for c in cells}
        self.cursor = 0
        self.fresh = True
        self.refresh(layout=True)

    @property
    def columns(self) -> list[int]:
        """The grid's columns that have a cell in this mode (a column nothing can be typed into is not drawn)."""
        return sorted({c.col for c in self.cells})

    @property
    def current(self) -> Cell | None:
        return self.cells[self.cursor] if self.cells else None

    def entered(self) -> dict[str, str]:
        """Non-empty cells as typed."""
        return {f: v for f, v in self.values.items() if v.strip()}

    def problems(self) -> dict[str, str]:
        """field -> reason, for every cell whose text cannot be used."""
        out = {}
        for f, v in self.values.items():
            try:
                parse_value(v, FIELD_KIND[f])
            except ReadingError as e:
                out[f] = str(e)
        return out

    def clear(self) -> None:
        for f in self.values:
            self.values[f] = ""
        self.cursor = 0
        self.fresh = True
        self.refresh()
        if self.cells:
            self._on_change(self.cells[0].field)

    def move_to(self, index: int) -> None:
        if self.cells:
            self.cursor = max(0, min(len(self.cells) - 1, index))
            self.fresh = True
            self._on_move(self.cells[self.cursor].field)

    def _step(self, step: int) -> None:
        """Tab / Enter (+1) or Shift+Tab (-1): the next cell in reading order, the reference angle skipped."""
        n = len(self.cells)
        k = self.cursor
        for _ in range(n):
            k = (k + step) % n
            if not is_reference(self.cells[k].field):
                break
        self.move_to(k)

    def _move_row(self, step: int) -> None:
        cur = self.current
        if cur is None:
            return
        same_col = [k for k, c in enumerate(self.cells) if c.col == cur.col and (c.row - cur.row) * step > 0]
        if same_col:
            self.move_to(min(same_col, key=lambda k: abs(self.cells[k].row - cur.row)))

    def on_key(self, event) -> None:
        if self.type_key(event.key, event.character if event.is_printable else None):
            event.stop()
            event.prevent_default()

    def type_key(self, key: str, character: str | None) -> bool:
        """Apply one key (``character``: what a printable key types, else None); True if the grid used it.
        Also called for keys typed ahead on the board list while this sheet was opening."""
        if not self.cells:
            return False
        field = self.cells[self.cursor].field
        handled = True
        if key in ("tab", "enter", "ctrl+j"):
            self._step(+1)
        elif key == "shift+tab":
            self._step(-1)
        elif key == "down":
            self._move_row(+1)
        elif key == "up":
            self._move_row(-1)
        elif key == "right":
            self.move_to(self.cursor + 1)
        elif key == "left":
            self.move_to(self.cursor - 1)
        elif key == "backspace":
            self.fresh = False
            self.values[field] = self.values[field][:-1]
            self._on_change(field)
        elif key in ("delete", "ctrl+u"):
            self.fresh = False
            self.values[field] = ""
            self._on_change(field)
        elif character:
            if self.fresh:  # the first key in a cell just entered replaces what was there
                self.values[field] = ""
                self.fresh = False
            if len(self.values[field]) < MAX_CELL:
                self.values[field] += character
            self._on_change(field)
        else:
            handled = False
        if handled:
            self.refresh()
        return handled

    def render(self) -> Text:
        # Fixed-width columns drawn as plain text: a rich Table re-measures every cell on each
        # keystroke, which cost several milliseconds per repaint.
        out = Text(no_wrap=True, overflow="crop", end="")
        out.append(" " * (NAME_W + 2))
        columns = self.columns
        for col in columns:
            out.append(" " + COLUMNS[col].rjust(CELL_W), "bold")
        out.append(" ")
        problems = self.problems()
        by_pos = {(c.row, c.col): (k, c) for k, c in enumerate(self.cells)}
        for r, name in enumerate(self.row_names):
            if not name:
                continue
            colour = self.row_colours[r] if r < len(self.row_colours) else "#cccccc"
            out.append("\n ")
            out.append(f"■ {name}"[:NAME_W].ljust(NAME_W), f"bold {colour}")
            out.append(" ")
            for col in columns:
                out.append(" ")
                if (r, col) not in by_pos:
                    out.append(" " * CELL_W)
                    continue
                k, c = by_pos[(r, col)]
                text = self.values.get(c.field, "")
                shown = text if len(text) <= CELL_W - 1 else "…" + text[-(CELL_W - 2) :]
                style = ""
                if c.field in problems:
                    style = ON_ALARM
                    shown = (shown or " ") + "!"
                if k == self.cursor and self.has_focus:
                    style = (style + " reverse").strip()
                    # Just entered: the whole value is selected (typing replaces it); editing: a caret.
                    shown = shown if (self.fresh and text) else shown + "▏"
                if not text and is_reference(c.field):
                    # Left blank, the reference is 0° (core.reference); Tab passes it by.
                    shown = f"{REFERENCE_DEG:g} ref" + ("▏" if k == self.cursor and self.has_focus else "")
                    style = style or "#8a8a8a"
                shown = shown or ("_" if k == self.cursor else "·")
                out.append(shown.rjust(CELL_W)[-CELL_W:], style or "#e0e0e0")
            out.append(" ")
        return out
