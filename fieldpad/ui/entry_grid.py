"""The entry grid: one focusable widget that owns every cell of the sheet.

Why one widget: with a separate Input per cell, characters that arrive in the
same burst as Tab or Enter can land in the field being left, because focus
moves after the key is handled.  Here the grid keeps its own cursor and moves
it inside the same key handler, so every following character lands in the
cell the technician moved to, however fast the keys arrive.
"""
from __future__ import annotations

from rich.text import Text
from textual.reactive import reactive
from textual.widget import Widget

from ..core.readings import FIELD_KIND, ReadingError, parse_value
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

    def configure(self, cells: list[Cell], row_names: list[str], row_colours: list[str],
                  values: dict | None = None) -> None:
        self.cells = cells
        self.row_names = row_names
        self.row_colours = row_colours
        keep = values if values is not None else self.values
        self.values = {c.field: keep.get(c.field, "") for c in cells}
        self.cursor = 0
        self.refresh(layout=True)

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
        self.refresh()
        if self.cells:
            self._on_change(self.cells[0].field)

    def move_to(self, index: int) -> None:
        if self.cells:
            self.cursor = max(0, min(len(self.cells) - 1, index))
            self._on_move(self.cells[self.cursor].field)

    def _move_row(self, step: int) -> None:
        cur = self.current
        if cur is None:
            return
        same_col = [k for k, c in enumerate(self.cells) if c.col == cur.col and (c.row - cur.row) * step > 0]
        if same_col:
            self.move_to(min(same_col, key=lambda k: abs(self.cells[k].row - cur.row)))

    def on_key(self, event) -> None:
        if not self.cells:
            return
        key = event.key
        field = self.cells[self.cursor].field
        handled = True
        if key in ("tab", "enter", "ctrl+j"):
            self.move_to((self.cursor + 1) % len(self.cells))
        elif key == "shift+tab":
            self.move_to((self.cursor - 1) % len(self.cells))
        elif key == "down":
            self._move_row(+1)
        elif key == "up":
            self._move_row(-1)
        elif key == "right":
            self.move_to(self.cursor + 1)
        elif key == "left":
            self.move_to(self.cursor - 1)
        elif key == "backspace":
            self.values[field] = self.values[field][:-1]
            self._on_change(field)
        elif key in ("delete", "ctrl+u"):
            self.values[field] = ""
            self._on_change(field)
        elif event.is_printable and event.character and len(self.values[field]) < MAX_CELL:
            self.values[field] += event.character
            self._on_change(field)
        else:
            handled = False
        if handled:
            event.stop()
            event.prevent_default()
            self.refresh()

    def render(self) -> Text:
        # Fixed-width columns drawn as plain text: a rich Table re-measures every cell on each
        # keystroke, which cost several milliseconds per repaint.
        out = Text(no_wrap=True, overflow="crop", end="")
        out.append(" " * (NAME_W + 2))
        for title in COLUMNS:
            out.append(" " + title.rjust(CELL_W), "bold")
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
            for col in range(len(COLUMNS)):
                out.append(" ")
                if (r, col) not in by_pos:
                    out.append(" " * CELL_W)
                    continue
                k, c = by_pos[(r, col)]
                text = self.values.get(c.field, "")
                shown = text if len(text) <= CELL_W - 1 else "…" + text[-(CELL_W - 2):]
                style = ""
                if c.field in problems:
                    style = ON_ALARM
                    shown = (shown or " ") + "!"
                if k == self.cursor and self.has_focus:
                    style = (style + " reverse").strip()
                    shown = shown + "▏"
                if not shown and c.field == "va_deg":
                    shown, style = "0 ref", style or "#6f6f6f"  # VA is the reference when left empty
                shown = shown or ("_" if k == self.cursor else "·")
                out.append(shown.rjust(CELL_W)[-CELL_W:], style or "#e0e0e0")
            out.append(" ")
        return out
