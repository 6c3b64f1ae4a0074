"""A fixed-size text area that redraws without asking for a new layout.

``Static.update`` asks Textual to lay the screen out again; on the sheet the
panels keep their size while the technician types, so a plain repaint is
enough and keeps each keystroke cheap.
"""
from __future__ import annotations

from textual.widget import Widget


class TextPanel(Widget):
    def __init__(self, content="", **kwargs) -> None:
        super().__init__(**kwargs)
        self._content = content

    def update(self, content) -> None:
        self._content = content
        self.refresh()

    def render(self):
        return self._content
