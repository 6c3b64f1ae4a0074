"""Results and findings as Rich Text for the sheet (and the previous-reading comparison)."""

from __future__ import annotations

from rich.text import Text

from .palette import ALARM, INFO, MUTED, ON_ALARM, ON_WARN, PREVIOUS

SEVERITY_TAG = {"alarm": ("ALARM", ON_ALARM), "warning": ("WARN ", ON_WARN), "info": ("info ", INFO)}


#: A finding in a few words, for tables where the whole message does not fit (day review, history).
FINDING_WORDS = {
    "PHASE_LOST": "phase lost",
    "ROTATION_REVERSED": "reverse rotation",
    "ROTATION_UNKNOWN": "rotation unknown",
    "VOLTAGES_IN_PHASE": "voltages in phase",
    "VOLTAGE_OUT_OF_RANGE": "voltage out of range",
    "VOLTAGE_RANGE_B": "voltage in Range B",
    "VOLTAGE_NO_RANGE": "nominal not known",
    "VUF_HIGH": "voltage unbalance",
    "LVUR_EXCESSIVE": "unbalance: no motors",
    "LVUR_DERATE": "motor derating",
    "CURRENT_UNBALANCE": "current unbalance",
    "NEUTRAL_OVERLOAD": "neutral overload",
    "NEUTRAL_HIGH": "neutral high",
    "NEUTRAL_MISMATCH": "neutral ≠ phasor sum",
    "CT_REVERSED": "CT reversed",
    "CT_TWO_REVERSED": "two CTs reversed",
    "CLAMPS_ROTATED": "clamps on wrong phases",
    "NEUTRAL_SHIFT": "neutral shifted",
    "CURRENT_SEQUENCE": "currents reverse",
    "HIGH_LEG_POSITION": "high leg not on B",
    "HIGH_LEG_NOT_FOUND": "no high leg found",
    "MAGNITUDE_ONLY": "no angles",
    "ARC_FLASH_LABEL": "arc-flash label",
    "CLAMPS_SWAPPED": "two clamps swapped",
    "CURRENT_SUM": "3-wire currents ≠ 0",
    "LL_MISMATCH": "LL ≠ from LN",
    "LL_NOT_CLOSED": "LL angles do not close",
    "NEUTRAL_BELOW_SUM": "neutral < phasor sum",
    "POWER_TO_SUPPLY": "power toward supply",
}
SEVERITY_WORD = {"alarm": "ALARM", "warning": "WARN", "info": "info"}


def finding_words(f: dict, phase: bool = True) -> str:
    """ "ALARM reverse rotation": a finding's severity and what it is, in words (never its code alone);
    ``phase``: with the phase it is on, "(C)"."""
    what = FINDING_WORDS.get(f["code"], f["code"].replace("_", " ").lower())
    return f"{SEVERITY_WORD[f['severity']]} {what}" + (f" ({f['phase']})" if phase and f.get("phase") else "")


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


#: What the words on the results panel mean (F1 help shows it too).
LEGEND = "typed = measured, as entered · calc = computed from the phasors · est = estimated from the magnitudes alone"


def results_text(r: dict | None, system: str = "wye", labels=("A", "B", "C"), typed: dict | None = None) -> Text:
    """Headline results, each figure with its label and unit on its own side, and what applies to
    ``system`` only (a split-phase board has no rotation, no symmetrical components; it has L1-L2).

    Measured (typed), computed (calc, from phasors) and estimated (est, from magnitudes) are told apart."""
    t = Text(no_wrap=True, overflow="ellipsis")
    if r is None:
        t.append("Type the readings: results appear as you type.", MUTED)
        return t
    typed = typed or {}

    def line(*parts):
        """parts: (text, style) pairs; a label is bold, a figure plain, a note muted."""
        for text, style in parts:
            t.append(text, style)
        t.append("\n")

    B = "bold"
    la, lb = labels[0], labels[1]
    if system == "split-phase":
        from .sheet_model import field_words

        v12, how = _split_ll(typed)
        line((f"{field_words('vab', labels)} ", B), (v12, ""), (f" {how}" if how else "", MUTED))
        line(("Legs dev/avg ", B), (f"{_f(r['pvur_pct'], '{:.2f}')} %", ""))
    else:
        line(
            ("V1 ", B),
            (f"{_f(r['v1'])} V{_ang(r['v1_deg'])}", ""),
            ("  V2 ", B),
            (f"{_f(r['v2'], '{:.2f}')} V", ""),
            ("  V0 ", B),
            (f"{_f(r['v0'], '{:.2f}')} V", ""),
        )
        line(
            ("VUF V2/V1 ", B),
            (f"{_f(r['vuf_pct'], '{:.2f}')} %", ""),
            (" IEC", MUTED),
            ("  PVUR ", B),
            (f"{_f(r['pvur_pct'], '{:.2f}')} %", ""),
            (" IEEE", MUTED),
        )
        line(
            ("LVUR ", B),
            (f"{_f(r['lvur_pct'], '{:.2f}')} %", ""),
            (" NEMA", MUTED),
            ("  motor derate ", B),
            (f"×{_f(r['derating'], '{:.2f}')}", ""),
        )
        rot = r["rotation"]
        rot_words = {"ABC": f"{la}-{lb}-{labels[2]} (forward)", "ACB": f"{la}-{labels[2]}-{lb} REVERSED"}.get(
            rot, "not determined (see findings)" if rot == "unknown" else "needs voltage angles"
        )
        line(("Rotation ", B), (rot_words, f"bold {ALARM}" if rot == "ACB" else ""))
        line(
            ("I1 ", B),
            (f"{_f(r['i1'])} A{_ang(r['i1_deg'])}", ""),
            ("  I2 ", B),
            (f"{_f(r['i2'])} A", ""),
            ("  I0 ", B),
            (f"{_f(r['i0'])} A", ""),
        )
    line(
        ("I unbal. ", B),
        ("" if system == "split-phase" else f"I2/I1 {_f(r['iuf_pct'])} % · ", ""),
        (f"max dev/avg {_f(r['iur_pct'])} %", ""),
    )
    if system != "delta":
        measured = _typed_number(typed, "i_n", "A")
        line(
            ("IN ", B),
            ("typed ", MUTED),
            (f"{_f(measured)} A", ""),
            ("  calc ", MUTED),
            (f"{_f(r['i_n_calc'])} A", ""),
            ("  est ", MUTED),
            (f"{_f(r['i_n_est'])} A", ""),
        )
    line(("P ", B), (_si(r["p_w"], "W"), ""), ("  Q ", B), (_si(r["q_var"], "var"), ""), ("  calc", MUTED))
    line(("S ", B), (_si(r["s_va"], "VA"), ""), ("  PF ", B), (_f(r["pf"], "{:.2f}"), ""), ("  calc", MUTED))
    return t


def _typed_number(typed: dict, field: str, kind: str):
    """A typed value as a number (None if empty or unreadable)."""
    from ..core.readings import ReadingError, parse_value

    try:
        return parse_value(typed.get(field), kind)
    except ReadingError:
        return None


def _split_ll(typed: dict) -> tuple[str, str]:
    """L1-L2 of a split-phase board from the typed legs: (figure, how it was found)."""
    import cmath
    import math

    from ..core.readings import ReadingError, parse_value

    try:
        va, vb = parse_value(typed.get("va"), "V"), parse_value(typed.get("vb"), "V")
        da, db = parse_value(typed.get("va_deg"), "deg"), parse_value(typed.get("vb_deg"), "deg")
    except ReadingError:
        return "—", ""
    if va is None or vb is None:
        return "—", "(type both legs)"
    if db is not None:
        a = cmath.rect(va, math.radians(da or 0.0))  # a blank reference is 0° (core.reference)
        b = cmath.rect(vb, math.radians(db))
        return f"{abs(a - b):.1f} V", "calc"
    return f"{va + vb:.1f} V", "est (legs taken 180° apart)"


def reasons_text(reasons: list[str]) -> Text:
    """Why the typed set gives no results (shown at once, wrapped, never cut)."""
    t = Text(overflow="fold")
    t.append("NO RESULTS ", ON_ALARM)
    t.append(" the values typed do not fit together:\n", f"bold {ALARM}")
    for r in reasons:
        t.append(f"• {r}\n")
    return t


PHASE_ROWS = (("va", "vb", "vc"), ("vab", "vbc", "vca"), ("ia", "ib", "ic"), ("i_n",))


def compare_text(
    prev_row: dict, prev_result: dict | None, typed: dict, result: dict | None, labels, system: str
) -> Text:
    """F3: the previous reading's per-phase values beside what is typed now, with the change (now − was)."""
    from ..core.readings import ReadingError, parse_value
    from .sheet_model import field_words

    t = Text(no_wrap=True, overflow="ellipsis")
    t.append("Previous reading · now · change\n", f"bold {PREVIOUS}")
    t.append(f"{'':<8}{'was':>9}{'now':>9}{'change':>10}\n", "bold")

    def num(x):
        return "—" if x is None else f"{x:.1f}"

    for group in PHASE_ROWS:
        for f in group:
            if system == "split-phase" and f in ("vc", "ic", "vbc", "vca"):
                continue
            was = prev_row.get(f)
            try:
                now = parse_value(typed.get(f), "A" if f[0] == "i" else "V")
            except ReadingError:
                now = None
            if was is None and now is None:
                continue
            unit = "A" if f[0] == "i" else "V"
            change = f"{now - was:+.1f} {unit}" if (was is not None and now is not None) else ""
            t.append(f"{field_words(f, labels)[:8]:<8}", "bold")
            t.append(f"{num(was):>9}", PREVIOUS)
            t.append(f"{num(now):>9}{change:>10}\n")
    p, r = prev_result or {}, result or {}
    for key, name in (("vuf_pct", "VUF %"), ("lvur_pct", "LVUR %"), ("iur_pct", "I unb %")):
        a, b = p.get(key), r.get(key)
        if a is None and b is None:
            continue
        t.append(f"{name:<8}", "bold")
        t.append(f"{_f(a, '{:.2f}'):>9}", PREVIOUS)
        t.append(f"{_f(b, '{:.2f}'):>9}{(f'{b - a:+.2f}' if a is not None and b is not None else ''):>10}\n")
    if system != "split-phase":
        t.append(f"{'Rotation':<8}", "bold")
        t.append(f"{(p.get('rotation') or '—'):>9}", PREVIOUS)
        t.append(f"{(r.get('rotation') or '—'):>9}\n")
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
                t.append(
                    f"      measured {_f(f['value'], '{:g}')} {f['unit']}, threshold {_f(f['threshold'], '{:g}')}\n",
                    MUTED,
                )
            t.append(f"      source: {f['source']}\n", MUTED)
        else:
            t.append(f["message"] + "\n")
    return t
