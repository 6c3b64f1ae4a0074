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

from rich.segment import Segment
from rich.text import Text
from textual.geometry import Region
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
        """Show ``content``; nothing is repainted when it is the same as what is shown (most keystrokes
        change only some of the sheet's panels, and each repainted line costs Textual time)."""
        if self._strips is not None and _same(content, self._content):
            return
        old, drawn_for = self._strips, self._strips_for
        self._content = content
        self._strips = None
        if old is None or not self.is_mounted or drawn_for != self.size:
            self.refresh()
            return
        # Draw now and repaint only the lines that changed (typing a digit changes a few of them).
        new = self._lines()
        changed = [y for y in range(max(len(old), len(new))) if y >= len(old) or y >= len(new) or old[y] != new[y]]
        if len(changed) * 2 > len(new):
            self.refresh()
        elif changed:
            width = self.size.width
            self.refresh(*(Region(0, y, width, 1) for y in changed))  # content coordinates

    def notify_style_update(self) -> None:
        super().notify_style_update()
        self._strips = None  # colours come from the styles: draw again

    def render(self):
        # Used by Textual only where the line API is not (e.g. text selection); same content.
        return self._content

    def _lines(self) -> list[Strip]:
        size = self.size
        if self._strips is None or self._strips_for != size:
            width, height = max(1, size.width), max(1, size.height)
            content, style, console = self._content, self.rich_style, self.app.console
            if isinstance(content, Text) and content.no_wrap and content.overflow in ("crop", "ellipsis"):
                # Lines that never wrap (results, drawing): each line straight to a strip, without
                # rich's general layout (about half of a keystroke's drawing time went there).
                strips = []
                for line in content.split("\n", allow_blank=True)[:height]:
                    if line.cell_len > width:
                        line.truncate(width, overflow=content.overflow)
                    segments = Segment.apply_style(line.render(console, end=""), style)
                    strips.append(Strip(list(segments)).extend_cell_length(width, style))
                strips += [Strip.blank(width, style)] * (height - len(strips))
            else:
                options = console.options.update_dimensions(width, height)
                lines = console.render_lines(content, options, style=style, pad=True)
                strips = [Strip(line, width) for line in lines[:height]]
            self._strips = strips
            self._strips_for = size
        return self._strips

    def render_line(self, y: int) -> Strip:
        lines = self._lines()
        if 0 <= y < len(lines):
            return lines[y]
        return Strip.blank(self.size.width, self.rich_style)


def _same(a, b) -> bool:
    """Whether two contents draw the same (rich Text's ``==`` compares only the words and spans)."""
    if isinstance(a, Text) and isinstance(b, Text):
        return (
            a == b
            and a.style == b.style
            and a.justify == b.justify
            and a.overflow == b.overflow
            and a.no_wrap == b.no_wrap
            and a.end == b.end
        )
    return a is b
