"""Stored text on the terminal: control characters never reach the terminal raw."""

from __future__ import annotations

from ..formats.text import printable


def markup_safe(text) -> str:
    """User text placed inside Rich markup: markup escaped, control characters made visible."""
    from rich.markup import escape

    return escape(printable(text))


__all__ = ["printable", "markup_safe"]


def short_id(reading_id: str) -> str:
    """A reading id shortened for the screen: its last 8 hex digits.  The first ones of a UUIDv7 are its
    time, shared by readings saved in the same minute; the last ones are random, so they do not repeat."""
    return reading_id.replace("-", "")[-8:]
