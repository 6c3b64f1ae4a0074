"""Results and findings as Rich Text for the sheet (and the previous-reading comparison)."""
from __future__ import annotations

from rich.text import Text

from .palette import ALARM, INFO, MUTED, ON_ALARM, ON_WARN, PREVIOUS

SEVERITY_TAG = {"alarm": ("ALARM", ON_ALARM), "warning": ("WARN ", ON_WARN),
                "info": ("info ", INFO)}


def _f(x, fmt="{:.1f}", dash="—"):
    return dash if x is None else fmt.format(x)


def _si(x, unit):
    if x is None:
        return "—"
    ax = abs(x)
    if ax >= 1e6:
        return f"{x / 1e6:.2f} M{unit}"
    if ax >= 1e3:
        return f"{x / 1e3:.2f} k{unit}"
    return f"{x:.0f} {unit}"


def _ang(x):
    return "" if x is None else f"∠{x + 0.0:.1f}°".replace("-0.0°", "0.0°")


def results_text(r: dict | None, previous: dict | None = None) -> Text:
    """Headline results; with ``previous``, each line shows the change."""
    t = Text(no_wrap=True, overflow="ellipsis")
    if r is None:
        t.append("Type the readings: results appear as you type.", MUTED)
        return t

    def line(label, value, extra="", prev=None, style=""):
        t.append(f"{label:<6} ", "bold")
        t.append(value, style)
        if extra:
            t.append(" " + extra, MUTED)
        if prev is not None:
            t.append(f"  (was {prev})", PREVIOUS)
        t.append("\n")

    p = previous or {}
    pv = (lambda k, fmt="{:.2f}": _f(p.get(k), fmt)) if previous else (lambda *a: None)
    line("V1", f"{_f(r['v1'])}{_ang(r['v1_deg'])}", f"V2 {_f(r['v2'], '{:.2f}')} V0 {_f(r['v0'], '{:.2f}')}",
         pv("v1", "{:.1f}"))
    line("VUF", f"{_f(r['vuf_pct'], '{:.2f}')}%", f"IEC  IEEE {_f(r['pvur_pct'], '{:.2f}')}%", pv("vuf_pct"))
    line("NEMA", f"{_f(r['lvur_pct'], '{:.2f}')}%", f"derate {_f(r['derating'], '{:.2f}')}", pv("lvur_pct"))
    rot = r["rotation"] or "n/a"
    line("Rotat.", rot, "" if rot != "unknown" else "(see findings)", p.get("rotation") if previous else None,
         f"bold {ALARM}" if rot == "ACB" else "bold")
    line("I1", f"{_f(r['i1'])}{_ang(r['i1_deg'])}", f"I2 {_f(r['i2'])} I0 {_f(r['i0'])}", pv("i1", "{:.1f}"))
    line("I unb.", f"{_f(r['iuf_pct'])}%", f"dev/avg {_f(r['iur_pct'])}%", pv("iur_pct", "{:.1f}"))
    line("IN", f"{_f(r['i_n_calc'])} A", f"est {_f(r['i_n_est'])} A", pv("i_n_calc", "{:.1f}"))
    line("P", f"{_si(r['p_w'], 'W')}", f"Q {_si(r['q_var'], 'var')}", _si(p.get("p_w"), "W") if previous else None)
    line("S", f"{_si(r['s_va'], 'VA')}", f"PF {_f(r['pf'], '{:.2f}')}")
    return t


def per_phase_text(r: dict | None, labels) -> Text:
    t = Text(no_wrap=True, overflow="ellipsis")
    if r is None:
        return t

    def k(x):
        return "—" if x is None else f"{x / 1000:.2f}"

    t.append(f"{'':<6}{'kW':>8}{'kvar':>8}{'PF':>6}\n", "bold")
    for lab, ph in zip(labels, "abc"):
        t.append(f"{lab:<6}{k(r[f'p_{ph}_w']):>8}{k(r[f'q_{ph}_var']):>8}{_f(r[f'pf_{ph}'], '{:.2f}'):>6}\n")
    t.append(f"{'Total':<6}{k(r['p_w']):>8}{k(r['q_var']):>8}{_f(r['pf'], '{:.2f}'):>6}\n", "bold")
    t.append(f"S arith. {_si(r['s_va'], 'VA')}\nS vector {_si(r['s_vector_va'], 'VA')}\n")
    t.append("Q > 0: current lags (IEEE 1459)\n", MUTED)
    if r.get("i_n_diff") is not None:
        t.append(f"IN measured − calc {r['i_n_diff']:+.1f} A\n")
    if r.get("high_leg"):
        t.append(f"High leg: {r['high_leg']}\n")
    return t


def findings_text(findings: list[dict], detail: bool = False) -> Text:
    # Wrapped, never cut: the end of a message says what to check next.
    t = Text(overflow="fold")
    if not findings:
        t.append("No findings from these readings.\n", MUTED)
        t.append("(Not a statement that the equipment is safe.)", MUTED)
        return t
    for f in findings:
        tag, style = SEVERITY_TAG[f["severity"]]
        t.append(tag, style)
        t.append(" ")
        if detail:
            t.append(f["message"] + "\n")
            if f["value"] is not None or f["threshold"] is not None:
                t.append(f"      measured {_f(f['value'], '{:g}')} {f['unit']}, threshold "
                         f"{_f(f['threshold'], '{:g}')}\n", MUTED)
            t.append(f"      source: {f['source']}\n", MUTED)
        else:
            t.append(f["message"] + "\n")
    return t
