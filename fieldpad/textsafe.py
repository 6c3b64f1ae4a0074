"""Stored text shown to a person: control characters never pass through raw.

Used by the terminal UI (a raw escape sequence would drive the terminal) and
by the HTML report (control characters have no place in a printed record).
"""
from __future__ import annotations

import re

_CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f-\x9f\u2028\u2029]")
_CONTROL_ALL = re.compile(r"[\x00-\x1f\x7f-\x9f\u2028\u2029]")


def printable(text, keep_tab_newline: bool = False) -> str:
    """Text with every control character shown as U+FFFD (tab and newline kept if asked)."""
    pattern = _CONTROL if keep_tab_newline else _CONTROL_ALL
    return pattern.sub("\ufffd", "" if text is None else str(text))
