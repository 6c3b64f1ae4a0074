"""Phase colour sets: the conductor colour names, and hex colours to show them on
a dark terminal and on paper.

IEC 60445 (L1 brown, L2 black, L3 grey, N blue) is a standard.  The North
American sets (208Y/120: black, red, blue, white neutral; 480Y/277: brown,
orange, yellow, grey neutral) are common practice, not a code rule.  Black
conductors are drawn light grey on a dark terminal, and white or yellow ones
darker on paper, so every line stays visible; the letters always name the phase.
"""

from __future__ import annotations


def phase_labels(setting: str | None) -> tuple[str, str, str]:
    """The three phase names a site uses: ``"L123"`` gives L1, L2, L3 (IEC 60445 terminal marking), anything
    else A, B, C (the North American letters)."""
    return ("L1", "L2", "L3") if setting == "L123" else ("A", "B", "C")


#: set -> ((name, terminal hex, print hex) for A, B, C, N)
COLOUR_SETS = {
    "iec60445": (
        ("brown", "#c07030", "#8b4513"),
        ("black", "#d8d8d8", "#000000"),
        ("grey", "#9a9a9a", "#808080"),
        ("blue", "#4f8fff", "#1f4fd0"),
    ),
    "na-208y120": (
        ("black", "#d8d8d8", "#000000"),
        ("red", "#ff5050", "#d00000"),
        ("blue", "#4f8fff", "#1f4fd0"),
        ("white", "#f5f5f5", "#9a9a9a"),
    ),
    "na-480y277": (
        ("brown", "#c07030", "#8b4513"),
        ("orange", "#ff9a1f", "#e07000"),
        ("yellow", "#f2e14c", "#b59a00"),
        ("grey", "#9a9a9a", "#808080"),
    ),
}


def colours(colour_set: str, medium: str = "terminal") -> list[str]:
    k = 1 if medium == "terminal" else 2
    return [c[k] for c in COLOUR_SETS.get(colour_set, COLOUR_SETS["iec60445"])]


def names(colour_set: str) -> list[str]:
    return [c[0] for c in COLOUR_SETS.get(colour_set, COLOUR_SETS["iec60445"])]
