"""Stored text on the terminal: control characters never reach the terminal raw."""
from __future__ import annotations

import re

_CONTROL = re.compile(r"[\x00-\x1f\x7f-\x9f\u2028\u2029]")


def printable(text) -> str:
    """Text with every control character shown as a visible placeholder (U+FFFD)."""
    return _CONTROL.sub("\ufffd", "" if text is None else str(text))


def markup_safe(text) -> str:
    """User text placed inside Rich markup: markup escaped, control characters made visible."""
    from rich.markup import escape

    return escape(printable(text))
