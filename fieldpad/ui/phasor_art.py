"""A phasor diagram drawn with Unicode braille dots, for the terminal.

Each character cell holds 2 x 4 dots; a terminal cell is about twice as tall
as it is wide, so a dot is roughly square and circles stay round.  Voltages
and currents have separate scales (each set fills its own radius: voltages
the full radius, currents 70 % of it), so both stay readable whatever their
units.  The letter of each phasor stands just beyond its tip, so a phasor is
never named by colour alone.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from rich.text import Text

from .palette import MUTED

_DOT = {(0, 0): 0x01, (0, 1): 0x02, (0, 2): 0x04, (1, 0): 0x08, (1, 1): 0x10, (1, 2): 0x20, (0, 3): 0x40, (1, 3): 0x80}


@dataclass
class Arrow:
    label: str  # letters shown at the tip, e.g. "A" or "Ia"
    magnitude: float
    angle_deg: float  # counter-clockwise positive
    colour: str  # hex colour
    kind: str  # "V" or "I"


class BrailleCanvas:
    def __init__(self, width: int, height: int):
        self.w, self.h = max(8, width), max(4, height)
        self.bits = [[0] * self.w for _ in range(self.h)]
        self.style = [[""] * self.w for _ in range(self.h)]
        self.text: dict = {}

    def dot(self, x: int, y: int, style: str) -> None:
        if 0 <= x < 2 * self.w and 0 <= y < 4 * self.h:
            cx, cy = x // 2, y // 4
            self.bits[cy][cx] |= _DOT[(x % 2, y % 4)]
            self.style[cy][cx] = style

    def line(self, x0, y0, x1, y1, style: str, every: int = 1) -> None:
        n = int(max(abs(x1 - x0), abs(y1 - y0))) + 1
        for k in range(0, n, every):
            t = k / max(1, n - 1)
            self.dot(round(x0 + (x1 - x0) * t), round(y0 + (y1 - y0) * t), style)

    def put(self, cx: int, cy: int, s: str, style: str) -> None:
        for k, ch in enumerate(s):
            if 0 <= cx + k < self.w and 0 <= cy < self.h:
                self.text[(cx + k, cy)] = (ch, style)

    def render(self) -> Text:
        out = Text(no_wrap=True, overflow="crop")
        run: list[str] = []
        run_style = ""
        for cy in range(self.h):
            for cx in range(self.w):
                if (cx, cy) in self.text:
                    ch, st = self.text[(cx, cy)]
                elif self.bits[cy][cx]:
                    ch, st = chr(0x2800 + self.bits[cy][cx]), self.style[cy][cx]
                else:
                    ch, st = " ", ""
                if st != run_style and run:  # one span per run of a style, not one per cell
                    out.append("".join(run), run_style)
                    run = []
                run_style = st
                run.append(ch)
            if cy < self.h - 1:
                run.append("\n")
        if run:
            out.append("".join(run), run_style)
        return out


def draw(arrows: list[Arrow], width: int, height: int, rotation: str | None = None) -> Text:
    """Draw the phasors; returns Rich Text of ``height`` lines of ``width`` cells."""
    c = BrailleCanvas(width, height - 1)
    ox, oy = c.w, 2 * c.h  # centre in dots (the canvas is 2w x 4h dots)
    radius = max(2.0, min(c.w - 3, 2 * c.h - 2) * 1.0)
    # reference direction (0 degrees) as a dotted axis, and a faint ring
    c.line(ox, oy, ox + radius, oy, "#5f5f5f", every=2)
    for k in range(0, 360, 10):
        a = math.radians(k)
        c.dot(round(ox + radius * math.cos(a)), round(oy - radius * math.sin(a)), "#3a3a3a")
    vmax = max((a.magnitude for a in arrows if a.kind == "V" and a.magnitude > 0), default=0.0)
    imax = max((a.magnitude for a in arrows if a.kind == "I" and a.magnitude > 0), default=0.0)
    for a in sorted(arrows, key=lambda a: a.kind == "V"):  # voltages drawn last, on top
        full = vmax if a.kind == "V" else imax
        if not (full > 0 and a.magnitude == a.magnitude and a.angle_deg == a.angle_deg):
            continue
        r = radius * (1.0 if a.kind == "V" else 0.7) * a.magnitude / full
        ang = math.radians(a.angle_deg)
        x1, y1 = ox + r * math.cos(ang), oy - r * math.sin(ang)
        c.line(ox, oy, x1, y1, a.colour, every=1 if a.kind == "V" else 2)
        # the label just beyond the tip, in character cells
        lx = (x1 + 3 * math.cos(ang)) / 2.0
        ly = (y1 - 5 * math.sin(ang)) / 4.0
        cx = int(round(lx - (len(a.label) - 1) / 2 if math.cos(ang) >= 0 else lx - len(a.label) + 1))
        c.put(max(0, min(c.w - len(a.label), cx)), max(0, min(c.h - 1, int(round(ly)))), a.label, f"bold {a.colour}")
    c.put(c.w - 4, c.h // 2 if c.h > 2 else 0, "0°", MUTED)
    body = c.render()
    legend = Text(no_wrap=True, overflow="crop")
    if rotation:
        legend.append(f"rotation {rotation}  ", "bold")
    legend.append("V solid, I dotted; own scales", MUTED)
    legend.truncate(c.w)
    body.append("\n")
    body.append_text(legend)
    return body


def draw_triangle(
    u_ab: float, u_bc: float, u_ca: float, width: int, height: int, labels=("A", "B", "C"), colours=("#e0e0e0",) * 3
) -> Text:
    """The voltage triangle (solid) with its outer (dotted) and inner (sparse dots) Napoleon triangles
    (geometry: ``core.triangle``), and two lines saying what their sides are."""
    from ..core.triangle import napoleon, vertices

    a, b, c = (complex(x) for x in vertices(u_ab, u_bc, u_ca))
    out = [complex(x) for x in napoleon(a, b, c, outer=True)]
    inn = [complex(x) for x in napoleon(a, b, c, outer=False)]
    legend_lines = 3  # two lines here, one the sheet adds
    cv = BrailleCanvas(width, height - legend_lines)
    if a != a:  # NaN: no triangle
        t = Text("These line-to-line voltages cannot form a triangle: re-read them.", f"bold {ALARM_TEXT}")
        return t
    span = max(abs(z) for z in (a, b, c, *out, *inn)) or 1.0
    ox, oy = cv.w, 2 * cv.h
    scale = min(cv.w - 2, 2 * cv.h - 2) / span

    def xy(z: complex):
        return ox + z.real * scale, oy - z.imag * scale

    def poly(points, style, every):
        for p, q in zip(points, points[1:] + points[:1]):
            (x0, y0), (x1, y1) = xy(p), xy(q)
            cv.line(x0, y0, x1, y1, style, every=every)

    poly(out, "#7fb3ff", 2)
    poly(inn, "#ffb000", 3)
    for (p, q), colour in zip(((a, b), (b, c), (c, a)), colours):
        (x0, y0), (x1, y1) = xy(p), xy(q)
        cv.line(x0, y0, x1, y1, colour)
    for z, lab, colour in zip((a, b, c), labels, colours):
        x, y = xy(z * 1.12 if abs(z) else z)
        cv.put(
            max(0, min(cv.w - len(lab), int(round(x / 2.0)))),
            max(0, min(cv.h - 1, int(round(y / 4.0)))),
            lab,
            f"bold {colour}",
        )
    body = cv.render()
    outer_side, inner_side = abs(out[0] - out[1]), abs(inn[0] - inn[1])
    ratio = 100.0 * inner_side / outer_side if outer_side else float("nan")
    legend = Text(no_wrap=True, overflow="crop")
    legend.append("\n")
    legend.append("outer ", "bold #7fb3ff")
    legend.append(f"√3·V1 {outer_side:.1f} V", "")
    legend.append("\n")
    legend.append("inner ", "bold #ffb000")
    legend.append(f"√3·V2 {inner_side:.2f} V", "")
    legend.append(f" · V2/V1 {ratio:.2f} %", MUTED)
    body.append_text(legend)
    return body


ALARM_TEXT = "#ff5050"
