"""Default thresholds for findings, each with the source it comes from.

A site can override any of them (the database stores the overrides); the
defaults below are what fieldpad uses when nothing is set.
"""

from __future__ import annotations

from dataclasses import dataclass, fields, replace


@dataclass(frozen=True)
class Thresholds:
    """Finding thresholds.  Percentages are percent; ratios are plain numbers."""

    #: Negative-sequence unbalance above which a warning is raised (%).
    vuf_pct: float = 2.0
    #: NEMA line-voltage unbalance above which motors need derating (%).
    lvur_pct: float = 1.0
    #: NEMA line-voltage unbalance above which motor operation is not recommended (%).
    lvur_max_pct: float = 5.0
    #: Current unbalance (max deviation from average) that calls for a look (%).
    iur_pct: float = 10.0
    #: Neutral current over the highest phase current that calls for a look.
    neutral_ratio: float = 0.8
    #: Neutral current over the highest phase current that suggests overload.
    neutral_overload_ratio: float = 1.0
    #: Relative difference between measured and computed neutral worth a note.
    neutral_mismatch_ratio: float = 0.2
    #: A phase below this fraction of the largest one is taken as lost.
    collapse_ratio: float = 0.5
    #: One sequence must be this many times the other to call the rotation.
    dominance: float = 2.0
    #: Rotating components below this fraction of the zero sequence: the three are in phase.
    in_phase_ratio: float = 0.1
    #: Highest phase current below which a board's load is light (A).
    light_load_a: float = 10.0
    #: A phase is a reversed CT only with PF at or below minus this.
    ct_reversed_pf: float = 0.25
    #: Highest phase current over the main rating below which a board's load is light (rating entered).
    light_load_ratio: float = 0.1
    #: Typed line-to-line phasors whose sum exceeds this fraction of their average do not close.
    ll_closure_ratio: float = 0.05
    #: Measured line-to-line against derived from line-to-neutral: largest difference worth a warning (%).
    ll_mismatch_pct: float = 3.0
    #: A 3-wire feed's current sum above this fraction of the highest phase current.
    current_sum_ratio: float = 0.1
    #: Line-to-neutral spread (PVUR, V0/V1, or the two halves of a centre tap) of a moved neutral (%).
    neutral_shift_pct: float = 5.0
    #: Line-to-line unbalance (LVUR) at or below which line-to-line counts as balanced (%).
    ll_balanced_pct: float = 2.0

    def with_overrides(self, overrides: dict | None) -> Thresholds:
        """A copy with the given fields replaced; unknown names raise ``KeyError``."""
        if not overrides:
            return self
        known = {f.name for f in fields(self)}
        unknown = set(overrides) - known
        if unknown:
            raise KeyError(f"unknown threshold(s): {', '.join(sorted(unknown))}")
        return replace(self, **{k: float(v) for k, v in overrides.items()})


#: Where each default comes from (shown beside every finding).
SOURCES = {
    "vuf_pct": "EN 50160:2010 clause 4.2.5 (LV supply: 95 % of the 10-min mean values of each week within "
    "0-2 % negative sequence): a statistic of a week's recording, so a spot reading against it is "
    "indicative only",
    "lvur_pct": "NEMA MG 1 Part 14.36 (motor derating above 1 % line-voltage unbalance)",
    "lvur_max_pct": "NEMA MG 1 Part 14.36 (operation above 5 % unbalance not recommended)",
    "iur_pct": "common practice (current unbalance is typically 6-10 times the voltage unbalance); a warning "
    "only on a 3-wire delta above a light load, an info on distribution (4-wire, split-phase) boards",
    "neutral_ratio": "common practice",
    "neutral_overload_ratio": "the neutral's rating where it is entered (over it: an alarm); else common "
    "practice (a neutral sized like the phases carries no more than the highest "
    "phase), compared with the phases, so at most a warning",
    "neutral_mismatch_ratio": "common practice",
    "collapse_ratio": "common practice",
    "dominance": "common practice",
    "in_phase_ratio": "fieldpad's own margin (no standard gives one): |V1| and |V2| both under 10 % of |V0| "
    "means the three voltages are nearly in phase, which no three-phase supply gives",
    "voltage_ansi": "ANSI C84.1-2020 Table 1 (Range A 95-105 %, Range B 91.7-105.8 % of nominal, service voltage, "
    "on the table's own bases 120, 208, 240, 277, 347, 480, 600 V; from memory)",
    "voltage_iec": "IEC 60038:2009 clause 4 (nominal ±10 %, systems 100-1000 V, Table 1 bases such as 230 V of "
    "230/400 V; from memory)",
    "rotation": "common practice (ABC = B lags A by 120°)",
    "high_leg": (
        "NFPA 70 (NEC) 110.15 and 408.3(E): high leg marked orange and on phase B (from memory; local code governs)"
    ),
    "ct_reversed": "common practice (a reversed CT turns its phase's current by 180°): the wiring that brings "
    "every phase's V-I angle into PF 0.7 lagging to 0.95 leading (common practice for building and "
    "industrial loads), by 20 current-weighted degrees over as wired, and PF <= -0.25 on the "
    "reversed phase (fieldpad's own margins, for a near-quadrature light phase and the meter's "
    "angle error)",
    "clamps_rotated": "common practice (a clamp on another phase turns its current by 120°): the same PF margin "
    "as for a reversed CT, fieldpad's own",
    "power_to_supply": "common practice (all CTs reversed and a board that exports read the same: every phase's "
    "V-I angle 180° from a load's); the same PF margin as for a reversed CT, fieldpad's own",
    "neutral_shift": "common practice (an open neutral moves the star point: V0 appears, line-to-line stays "
    "balanced; on a centre tap the two halves part): V0/V1, PVUR or the halves' spread above "
    "5 % with LVUR <= 2 % are fieldpad's own lines",
    "light_load_a": "fieldpad's own choice (no standard): below 10 % of the main rating where it is entered, "
    "else below 10 A on the highest phase, a board is lightly loaded; set per site",
    "ll_closure_ratio": "Kirchhoff's voltage law (Vab + Vbc + Vca = 0); 5 % of the average is fieldpad's own "
    "margin above a meter's ±0.5 % and ±0.5° per channel",
    "ll_mismatch_pct": "Vab = Va - Vb (definition); 3 % is fieldpad's own margin above a meter's ±0.5 % per channel",
    "current_sum_ratio": "Kirchhoff's current law (a 3-wire feed's line currents sum to 0); 10 % of the highest "
    "phase and at least 1 A are fieldpad's own margins above a clamp's ±1 % and ±1-3°",
    "high_leg_ratio": "geometry of the 240/120 V centre-tapped delta (high leg = √3/2 of line-to-line, low legs "
    "= 1/2 each); ±0.05 on the ratio is fieldpad's own margin",
}
