"""A fixed-size text area that redraws without asking for a new layout.

``Static.update`` asks Textual to lay the screen out again; on the sheet the
panels keep their size while the technician types, so a plain repaint is
enough and keeps each keystroke cheap.

The content (rich Text or any rich renderable) is drawn line by line through
Textual's line API: rich renders it once per change at the panel's size and
each line is handed to Textual as a strip.  Textual's general path converts
rich Text to its own content type on every repaint, which took most of the
sheet's drawing time (tests/bench/bench_ui.py).
"""
from __future__ import annotations

from textual.strip import Strip
from textual.widget import Widget


class TextPanel(Widget):
    def __init__(self, content="", **kwargs) -> None:
        super().__init__(**kwargs)
        self._content = content
        self._strips: list[Strip] | None = None
        self._strips_for = None

    @property
    def content(self):
        """What the panel shows (a rich renderable)."""
        return self._content

    def update(self, content) -> None:
        self._content = content
        self._strips = None
        self.refresh()

    def render(self):
        # Used by Textual only where the line API is not (e.g. text selection); same content.
        return self._content

    def _lines(self) -> list[Strip]:
        width, height = self.size
        key = (width, height, self.rich_style)
        if self._strips is None or self._strips_for != key:
            console = self.app.console
            options = console.options.update_dimensions(max(1, width), max(1, height))
            lines = console.render_lines(self._content, options, style=self.rich_style, pad=True)
            self._strips = [Strip(line, width) for line in lines[:height]]
            self._strips_for = key
        return self._strips

    def render_line(self, y: int) -> Strip:
        lines = self._lines()
        if 0 <= y < len(lines):
            return lines[y]
        return Strip.blank(self.size.width, self.rich_style)
