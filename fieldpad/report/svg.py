"""A phasor diagram as inline SVG for the printable report.

Voltages and currents have their own scales (voltages fill the radius,
currents 70 % of it), each phasor carries its letters at the tip, and
currents are dashed, so nothing is told by colour alone.
"""

from __future__ import annotations

import math
from html import escape as _html_escape

from ..formats.text import printable


def escape(text) -> str:
    return _html_escape(printable(text))


def phasor_svg(arrows, size: int = 220, rotation: str | None = None, title: str = "") -> str:
    """``arrows``: iterable of (label, magnitude, angle_deg, colour_hex, kind "V" or "I")."""
    c = size / 2
    r = size * 0.36
    out = [
        f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {size} {size}" width="{size}" height="{size}" '
        f'role="img" aria-label="{escape(title or "phasor diagram")}">',
        f'<circle cx="{c}" cy="{c}" r="{r:.1f}" fill="none" stroke="#bbb" stroke-width="0.8"/>',
        f'<line x1="{c}" y1="{c}" x2="{c + r + 8:.1f}" y2="{c}" stroke="#999" stroke-dasharray="2 3"/>',
        f'<text x="{c + r + 10:.1f}" y="{c + 4}" font-size="10" fill="#666">0°</text>',
    ]
    arrows = [a for a in arrows if a[1] is not None and a[2] is not None and a[1] == a[1] and a[2] == a[2]]
    vmax = max((a[1] for a in arrows if a[4] == "V"), default=0) or 1.0
    imax = max((a[1] for a in arrows if a[4] == "I"), default=0) or 1.0
    for label, mag, ang, colour, kind in sorted(arrows, key=lambda a: a[4] == "V"):
        length = r * (mag / vmax if kind == "V" else 0.7 * mag / imax)
        a = math.radians(ang)
        x, y = c + length * math.cos(a), c - length * math.sin(a)
        dash = ' stroke-dasharray="4 3"' if kind == "I" else ""
        width = 2.2 if kind == "V" else 1.6
        out.append(
            f'<line x1="{c}" y1="{c}" x2="{x:.1f}" y2="{y:.1f}" stroke="{escape(colour)}" '
            f'stroke-width="{width}"{dash}/>'
        )
        # arrow head
        for side in (-1, 1):
            hx = x - 7 * math.cos(a + side * 0.4)
            hy = y + 7 * math.sin(a + side * 0.4)
            out.append(
                f'<line x1="{x:.1f}" y1="{y:.1f}" x2="{hx:.1f}" y2="{hy:.1f}" stroke="{escape(colour)}" '
                f'stroke-width="{width}"/>'
            )
        lx, ly = c + (length + 12) * math.cos(a), c - (length + 12) * math.sin(a)
        out.append(
            f'<text x="{lx:.1f}" y="{ly + 4:.1f}" font-size="12" font-weight="bold" text-anchor="middle" '
            f'fill="#222" stroke="#fff" stroke-width="3" paint-order="stroke">{escape(label)}</text>'
        )
    out.append(
        f'<text x="4" y="{size - (15 if rotation else 4)}" font-size="9" fill="#555">'
        "V solid, I dashed; own scales</text>"
    )
    if rotation:
        out.append(f'<text x="4" y="{size - 4}" font-size="9" fill="#555">rotation {escape(rotation)}</text>')
    out.append("</svg>")
    return "".join(out)
