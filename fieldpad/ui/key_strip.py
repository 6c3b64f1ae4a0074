"""The bottom line of every screen: the keys the screen offers, in one widget.

Textual's own footer builds one widget per key and restyles each of them
whenever the bindings change; on this app's screens that cost about a quarter
of the start-up (measured with tests/bench/bench_ui.py).  This strip draws the
same list as one line of text and redraws it when the screen's bindings
change (focus moves, a binding is enabled or disabled).
"""

from __future__ import annotations

import re

from rich.text import Text
from textual.widget import Widget

#: Key caps: dark text on light grey; descriptions in the strip's own colour.
KEY_STYLE = "bold #000000 on #c8c8c8"
KEY_OFF_STYLE = "#5a5a5a on #2a2a2a"
DESC_OFF_STYLE = "#7a7a7a"


def key_cap(display: str) -> str:
    """How a key is written on the strip: function keys as on the keyboard (F2), Esc spelled out."""
    if re.fullmatch(r"f\d{1,2}", display):
        return display.upper()
    return {"esc": "Esc", "escape": "Esc", "enter": "Enter", "tab": "Tab"}.get(display, display)


#: Keys every screen keeps on its strip, however narrow the terminal: back, quit, save, help.
ESSENTIAL = frozenset({"Save", "Back", "Quit", "Help", "Cancel", "Close"})


def strip_text(entries, width: int | None = None, keep_also=()) -> Text:
    """The strip's text from ``(key_display, description, enabled)`` entries.

    Where ``width`` columns cannot hold them all, the keys that matter on every
    screen (:data:`ESSENTIAL`) are kept and the others fill the room left, in
    their order (``keep_also``: descriptions a screen keeps as well, its own
    main keys); a key left off is left off whole (it stays in the help screen
    and the command palette).  The keys shown keep their order.
    """
    pieces = []
    for key, description, enabled in entries:
        piece = Text()
        piece.append(f" {key_cap(key)} ", KEY_STYLE if enabled else KEY_OFF_STYLE)
        piece.append(f" {description} ", "" if enabled else DESC_OFF_STYLE)
        pieces.append((piece, description in ESSENTIAL or description in keep_also))
    keep = [True] * len(pieces)
    if width is not None and sum(p.cell_len for p, _ in pieces) > width:
        room = width - sum(p.cell_len for p, essential in pieces if essential)
        for k, (p, essential) in enumerate(pieces):
            if not essential:
                keep[k] = p.cell_len <= room
                room -= p.cell_len if keep[k] else 0
    out = Text(no_wrap=True, overflow="crop", end="")
    for (piece, _), shown in zip(pieces, keep):
        if shown and (width is None or out.cell_len + piece.cell_len <= width):
            out.append_text(piece)
    return out


class KeyStrip(Widget):
    """One line listing the focused screen's keys, with their descriptions."""

    DEFAULT_CSS = """
    KeyStrip {
        dock: bottom;
        height: 1;
        background: #1a1a1a;
        color: #e8e8e8;
    }
    """

    def on_mount(self) -> None:
        self.screen.bindings_updated_signal.subscribe(self, self._bindings_changed)

    def on_unmount(self) -> None:
        self.screen.bindings_updated_signal.unsubscribe(self)

    def _bindings_changed(self, screen) -> None:
        if self.is_attached and screen is self.screen:
            self.refresh()

    def entries(self) -> list[tuple[str, str, bool]]:
        """``(key, description, enabled)`` for each shown binding, one per action, in binding order;
        the command palette's key last."""
        seen: set[str] = set()
        out = []
        palette = None
        for _node, binding, enabled, _tooltip in self.screen.active_bindings.values():
            if binding.key == self.app.COMMAND_PALETTE_BINDING and self.app.ENABLE_COMMAND_PALETTE:
                palette = (self.app.get_key_display(binding), "Commands", enabled)
                continue
            if not binding.show or not binding.description or binding.action in seen:
                continue
            seen.add(binding.action)
            out.append((self.app.get_key_display(binding), binding.description, enabled))
        if palette:
            out.append(palette)
        return out

    def render(self) -> Text:
        return strip_text(self.entries(), self.size.width or None, getattr(self.screen, "STRIP_KEEP", ()))
