"""Stored text shown to a person: control characters never pass through raw.

Used by the terminal UI (a raw escape sequence would drive the terminal) and
by the HTML report (control characters have no place in a printed record).
"""

from __future__ import annotations

import re

# C0 and C1 controls, DEL, line/paragraph separators and the bidirectional embedding, override and
# isolate characters (a U+202E in a board name would show the rest of a message reversed).
_BIDI = "\u200e\u200f\u202a-\u202e\u2066-\u2069"
_CONTROL = re.compile(f"[\\x00-\\x08\\x0b-\\x1f\\x7f-\\x9f\\u2028\\u2029{_BIDI}]")
_CONTROL_ALL = re.compile(f"[\\x00-\\x1f\\x7f-\\x9f\\u2028\\u2029{_BIDI}]")


def _visible(m: re.Match) -> str:
    code = ord(m.group())
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def printable(text, keep_tab_newline: bool = False) -> str:
    """Text with every control character shown visibly as its escape (ESC as ``\\x1b``, a right-to-left
    override as ``\\u202e``), so a person sees that it is there and what it is, and no terminal acts on it
    (tab and newline kept if asked)."""
    pattern = _CONTROL if keep_tab_newline else _CONTROL_ALL
    return pattern.sub(_visible, "" if text is None else str(text))
