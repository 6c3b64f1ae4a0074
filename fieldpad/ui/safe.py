"""Stored text on the terminal: control characters never reach the terminal raw."""
from __future__ import annotations

from ..formats.text import printable


def markup_safe(text) -> str:
    """User text placed inside Rich markup: markup escaped, control characters made visible."""
    from rich.markup import escape

    return escape(printable(text))


__all__ = ["printable", "markup_safe"]
