"""Field scenarios: generated healthy boards of every system type and a catalogue of wiring and supply faults.

An invented scenario of our own (no measured data): each board is built from a supply model, a load model
and a meter model, then read as a crew would type it.  ``tests/bench/bench_findings.py`` prints the table
over thousands of boards; ``tests/test_field_scenarios.py`` checks the same targets on a few hundred.

The models (stated once, fixed before the findings were tuned; the findings are tuned, not these)
------------------------------------------------------------------------------------------------
Systems: 208Y/120 and 480Y/277 wye (ANSI C84.1), 230/400 V wye (IEC 60038), 480 V 3-wire delta, 240/120 V
high-leg delta (centre tap on winding C-A, high leg B), 120/240 V split-phase.

Supply (healthy): positive sequence at 0.96-1.04 of the nominal base (inside ANSI Range A and IEC ±10 %);
negative sequence 0-0.6 % of it at a random angle; on wye boards a zero sequence 0-1 %; split-phase legs
each within ±0.5 %.  A healthy supply's unbalance of under 1 % is typical (common practice; EN 50160
clause 4.2.5 allows 2 % as a 95 %-of-week value).

Load: the board's main rating is one of 100, 225, 400, 800, 1200 A; the highest phase carries 1 %-100 % of
it (log-uniform: light to full load).  Displacement from PF 0.7 lagging to 0.95 leading.  A motor feeder
(3-wire delta always, a third of the wye boards) has three nearly equal currents (within 3 %) at one PF;
a distribution panel has uneven single-phase loads (each phase 35-100 % of the highest) at a PF per phase,
and on a tenth of them the board exports (power toward the supply, as a PV-fed panel).  The measured
neutral carries triplen harmonics of 0-8 % of the mean phase current (times three) above the phasor sum.
A neutral rating (equal to the main rating) is given on half of the 4-wire boards.

Meter (stated accuracy): voltages ±0.5 % gain common to the three channels plus ±0.2 % per channel,
±0.5° per channel; currents ±1 % ±0.05 A per clamp, ±1° (±3° below 5 A, where a clamp's phase error
grows); all uniform.  Angles are shown against VA (or Vab on a delta), wrapped to (-180, 180].  Wye boards
have line-to-line magnitudes typed on half of them, the measured neutral on half.

Faults (each applied to a healthy board of the systems it fits): see :data:`KINDS`.
"""

from __future__ import annotations

import cmath
import math
from collections import Counter
from dataclasses import dataclass

import numpy as np

from fieldpad.core.analysis import analyze
from fieldpad.core.fields import NUMERIC_FIELDS
from fieldpad.core.findings import findings_lists

A = cmath.exp(2j * math.pi / 3)
SYSTEM_TYPES = {  # name -> (system code, nominal_v, standard code 0 ANSI 1 IEC)
    "wye 208Y/120": (0, 208.0, 0),
    "wye 480Y/277": (0, 480.0, 0),
    "IEC 400/230": (0, 400.0, 1),
    "delta 480": (1, 480.0, 0),
    "high-leg 240/120": (2, 240.0, 0),
    "split 120/240": (3, 240.0, 0),
}
LN_BASE = {
    "wye 208Y/120": 120.0,
    "wye 480Y/277": 277.0,
    "IEC 400/230": 230.0,
    "delta 480": 480.0 / math.sqrt(3),
    "high-leg 240/120": 240.0 / math.sqrt(3),
    "split 120/240": 120.0,
}
THREE = tuple(k for k in SYSTEM_TYPES if not k.startswith("split"))
WYES = ("wye 208Y/120", "wye 480Y/277", "IEC 400/230")
RATINGS = (100.0, 225.0, 400.0, 800.0, 1200.0)
PHI_LAG, PHI_LEAD = math.degrees(math.acos(0.7)), -math.degrees(math.acos(0.95))
#: Board purpose codes (input field ``purpose``): 1 distribution panel, 2 motor feeder.
DISTRIBUTION, MOTOR = 1.0, 2.0


def _u(rng, lo, hi):
    return float(rng.uniform(lo, hi))


@dataclass
class Board:
    """The true state of one board: phasors (V, A) on one reference, and what the crew types."""

    stype: str
    v: list  # line-to-neutral (wye, high-leg to the centre tap, split legs) or LN-equivalent (delta)
    i: list  # line currents
    i_n: complex  # true fundamental neutral current
    harm: float  # triplen harmonic neutral current (A, RMS) on top of the fundamental
    rating: float
    n_rating: float | None
    purpose: float
    give_ll: bool
    give_in: bool
    ll_override: list | None = None  # measured line-to-line phasors when not from v (delta faults)
    ll_angle_error: list | None = None  # typing errors on line-to-line angles (degrees)

    @property
    def three(self):
        return not self.stype.startswith("split")


def healthy(rng, stype: str) -> Board:
    base = LN_BASE[stype]
    sys_code = SYSTEM_TYPES[stype][0]
    v1 = base * _u(rng, 0.96, 1.04)
    rating = RATINGS[int(rng.integers(len(RATINGS)))]
    imax = rating * math.exp(_u(rng, math.log(0.01), 0.0))
    motor = sys_code == 1 or (sys_code == 0 and rng.random() < 1 / 3)
    purpose = MOTOR if motor else DISTRIBUTION
    export = (not motor) and sys_code in (0, 3) and rng.random() < 0.1
    give_in = sys_code != 1 and rng.random() < 0.5
    n_rating = rating if (sys_code != 1 and rng.random() < 0.5) else None
    if sys_code == 3:
        va = v1 * (1 + _u(rng, -0.005, 0.005))
        vb = -v1 * (1 + _u(rng, -0.005, 0.005))
        v = [complex(va), complex(vb)]
    else:
        v2 = v1 * _u(rng, 0.0, 0.006) * cmath.exp(1j * _u(rng, -math.pi, math.pi))
        v0 = v1 * _u(rng, 0.0, 0.01) * cmath.exp(1j * _u(rng, -math.pi, math.pi)) if sys_code == 0 else 0
        v = [v0 + v1 + v2, v0 + A * A * v1 + A * v2, v0 + A * v1 + A * A * v2]
        if sys_code == 2:  # high-leg: node potentials v, centre tap on winding C-A
            n = (v[0] + v[2]) / 2
            v = [x - n for x in v]
    k = len(v)
    if motor:
        mags = [imax * _u(rng, 0.97, 1.0) for _ in range(k)]
        phi0 = _u(rng, PHI_LEAD, PHI_LAG)
        phis = [phi0 + _u(rng, -2, 2) for _ in range(k)]
    else:
        mags = [imax * _u(rng, 0.35, 1.0) for _ in range(k)]
        mags[int(rng.integers(k))] = imax
        phis = [_u(rng, PHI_LEAD, PHI_LAG) for _ in range(k)]
    if export:
        phis = [p + 180.0 for p in phis]
    if sys_code == 2:
        # Three-phase load on the line-to-line set (sums to zero) plus 120 V loads on A-N and C-N.
        share = _u(rng, 0.3, 0.9)
        vc_eq = [v[0] - sum(v) / 3, v[1] - sum(v) / 3, v[2] - sum(v) / 3]
        i3 = [share * imax * cmath.exp(1j * (cmath.phase(x) - math.radians(phis[0]))) for x in vc_eq]
        m3 = sum(i3) / 3
        i3 = [x - m3 for x in i3]
        ian = (1 - share) * mags[0] * cmath.exp(1j * (cmath.phase(v[0]) - math.radians(phis[1])))
        icn = (1 - share) * mags[2] * cmath.exp(1j * (cmath.phase(v[2]) - math.radians(phis[2])))
        i = [i3[0] + ian, i3[1], i3[2] + icn]
    else:
        ref = v if sys_code != 1 else [x - sum(v) / 3 for x in v]
        i = [m * cmath.exp(1j * (cmath.phase(x) - math.radians(p))) for m, x, p in zip(mags, ref, phis)]
        if motor:  # a motor (3-wire) load: no neutral current
            mean = sum(i) / 3
            i = [x - mean for x in i]
    i_n = sum(i) if sys_code != 1 else 0j
    harm = 0.0 if motor else 3 * _u(rng, 0.0, 0.08) * sum(abs(x) for x in i) / len(i)
    return Board(
        stype,
        v,
        i,
        i_n,
        harm,
        rating,
        n_rating,
        purpose,
        give_ll=sys_code in (0, 2) and (sys_code == 2 or rng.random() < 0.5),
        give_in=give_in,
    )


def read(rng, b: Board) -> dict:
    """The meter's reading of a board, as typed: a record of floats (NaN where not entered)."""
    sys_code, nominal, std = SYSTEM_TYPES[b.stype]
    rec = {f: math.nan for f in NUMERIC_FIELDS}
    rec.update(
        nominal_v=nominal,
        system=sys_code,
        standard=std,
        rating_a=b.rating,
        neutral_rating_a=math.nan if b.n_rating is None else b.n_rating,
        purpose=b.purpose,
    )
    gain = 1 + _u(rng, -0.005, 0.005)

    def vmeas(z):
        return z * gain * (1 + _u(rng, -0.002, 0.002)) * cmath.exp(1j * math.radians(_u(rng, -0.5, 0.5)))

    def imeas(z):
        mag = abs(z)
        err = 3.0 if mag < 5.0 else 1.0
        m = max(0.0, mag * (1 + _u(rng, -0.01, 0.01)) + _u(rng, -0.05, 0.05))
        return m * cmath.exp(1j * (cmath.phase(z) + math.radians(_u(rng, -err, err))))

    phases = "abc"[: len(b.v)]
    ll_true = b.ll_override or [b.v[0] - b.v[1], b.v[1] - b.v[2], b.v[2] - b.v[0]] if b.three else None
    if sys_code == 1:
        ll = [vmeas(x) for x in ll_true]
        ref = cmath.phase(ll[0])
        errs = b.ll_angle_error or [0.0, 0.0, 0.0]
        for name, z, e in zip(("vab", "vbc", "vca"), ll, errs):
            rec[name] = abs(z)
            rec[name + "_deg"] = _wrap(math.degrees(cmath.phase(z) - ref) + e)
    else:
        vm = [vmeas(x) for x in b.v]
        ref = cmath.phase(vm[0])
        for p, z in zip(phases, vm):
            rec["v" + p] = abs(z)
            rec[f"v{p}_deg"] = _wrap(math.degrees(cmath.phase(z) - ref))
        if b.give_ll:
            for name, z in zip(("vab", "vbc", "vca"), ll_true):
                rec[name] = abs(vmeas(z))
    for p, z in zip(phases, b.i):
        zm = imeas(z)
        rec["i" + p] = abs(zm)
        rec[f"i{p}_deg"] = _wrap(math.degrees(cmath.phase(zm) - ref)) if abs(zm) > 0 else math.nan
    if b.give_in:
        fund = abs(b.i_n)
        rec["i_n"] = max(0.0, math.hypot(fund, b.harm) * (1 + _u(rng, -0.01, 0.01)) + _u(rng, -0.05, 0.05))
    return rec


def _wrap(d):
    d = math.fmod(d, 360.0)
    if d > 180.0:
        d -= 360.0
    elif d <= -180.0:
        d += 360.0
    return d


# ---- the fault catalogue ------------------------------------------------------------------------------------
# Each fault turns a healthy board (and its reading) into a faulty one.  ``meter`` faults change what the
# meter sees (leads, clamps); ``supply`` faults change the board itself.


def _perm(x, order):
    return [x[k] for k in order]


def f_rotation(rng, b):
    # The supply turns A-C-B: A and C exchanged (keeps a high leg on B).
    b.v, b.i = _perm(b.v, (2, 1, 0)), _perm(b.i, (2, 1, 0))


def f_ct_one(rng, b):
    k = int(rng.integers(len(b.i)))
    b.i[k] = -b.i[k]


def f_ct_two(rng, b):
    keep = int(rng.integers(3))
    b.i = [x if k == keep else -x for k, x in enumerate(b.i)]


def f_ct_all(rng, b):
    b.i = [-x for x in b.i]


def f_clamps_rotated(rng, b):
    b.i = _perm(b.i, (1, 2, 0) if rng.random() < 0.5 else (2, 0, 1))


def f_clamps_swapped(rng, b):
    p, q = rng.choice(3, 2, replace=False)
    b.i[p], b.i[q] = b.i[q], b.i[p]


def f_phase_lost(rng, b):
    k = int(rng.integers(3))
    if SYSTEM_TYPES[b.stype][0] == 1:
        # 3-wire: the open phase's terminal floats on the load between the other two lines.
        p, q = (k + 1) % 3, (k + 2) % 3
        node = [b.v[0], b.v[1], b.v[2]]
        node[k] = node[p] + _u(rng, 0.3, 0.7) * (node[q] - node[p])
        b.v = node
        b.ll_override = [node[0] - node[1], node[1] - node[2], node[2] - node[0]]
        b.i[k] = 0j
        b.i[p] = b.i[p] * _u(rng, 0.5, 1.0)
        b.i[q] = -b.i[p]
    else:
        b.v[k] = b.v[k] * _u(rng, 0.0, 0.4)
        b.i[k] = b.i[k] * _u(rng, 0.0, 0.05)
        b.i_n = sum(b.i)


def f_open_neutral(rng, b):
    vn = abs(b.v[0]) * _u(rng, 0.08, 0.35) * cmath.exp(1j * _u(rng, -math.pi, math.pi))
    b.v = [x - vn for x in b.v]


def f_split_lost_neutral(rng, b):
    k = _u(rng, 0.25, 0.45)
    if rng.random() < 0.5:
        k = 1 - k
    total = abs(b.v[0]) + abs(b.v[1])
    b.v = [complex(total * k), complex(-total * (1 - k))]


def f_hld_halves(rng, b):
    # The centre tap (neutral) moved along winding C-A: halves 100/140 V and the like.
    a, c = b.v[0], b.v[2]
    k = _u(rng, 0.38, 0.46)
    if rng.random() < 0.5:
        k = 1 - k
    n = a + k * (c - a)
    b.v = [x - n for x in b.v]


def f_high_leg_wrong(rng, b):
    b.v, b.i = (
        (_perm(b.v, (1, 2, 0)), _perm(b.i, (1, 2, 0)))
        if rng.random() < 0.5
        else (_perm(b.v, (2, 0, 1)), _perm(b.i, (2, 0, 1)))
    )


def f_in_phase(rng, b):
    # All three voltage leads on one phase.
    k = int(rng.integers(3))
    ll = [b.v[0] - b.v[1], b.v[1] - b.v[2], b.v[2] - b.v[0]]
    b.v = [b.v[k]] * 3
    b.ll_override = [0j, 0j, 0j] if b.give_ll else ll


def f_ll_not_closed(rng, b):
    err = [0.0, 0.0, 0.0]
    err[int(rng.integers(1, 3))] = float(rng.choice([-1, 1])) * _u(rng, 20.0, 90.0)
    b.ll_angle_error = err


def f_neutral_rating(rng, b):
    b.n_rating = b.rating
    b.give_in = True
    target = b.n_rating * _u(rng, 1.05, 1.6)
    b.harm = math.sqrt(max(0.0, target * target - abs(b.i_n) ** 2))


def f_current_sum(rng, b):
    k = int(rng.integers(3))
    b.i[k] = b.i[k] * (_u(rng, 0.3, 0.7) if rng.random() < 0.5 else _u(rng, 1.4, 2.5))


def f_voltage_lead(rng, b):
    # One voltage lead on another phase's terminal; the line-to-line voltages measured apart, right.
    b.give_ll = True
    b.ll_override = [b.v[0] - b.v[1], b.v[1] - b.v[2], b.v[2] - b.v[0]]
    k = int(rng.integers(3))
    b.v = list(b.v)
    b.v[k] = b.v[(k + 1 + int(rng.integers(2))) % 3]


@dataclass(frozen=True)
class Kind:
    systems: tuple
    names: frozenset  # finding codes that name the fault
    apply: object = None
    info_by_design: bool = False  # the fault looks like a healthy state (e.g. an exporting board): info
    need: str = ""  # a condition on the healthy board: "loaded" (at least 10 % of rating), "-import" (taking
    # power from the supply) or "-export", "distribution" (a distribution panel)


KINDS = {
    "healthy": Kind(tuple(SYSTEM_TYPES), frozenset()),
    "rotation reversed": Kind(THREE, frozenset({"ROTATION_REVERSED"}), f_rotation),
    "one CT reversed": Kind(tuple(SYSTEM_TYPES), frozenset({"CT_REVERSED"}), f_ct_one, need="loaded-import"),
    # On a board that exports, one CT reversed reads as two reversed on a board that imports (and the other
    # way round): either finding names the clamps' direction.
    "one CT reversed, exporting board": Kind(
        WYES + ("split 120/240",), frozenset({"CT_REVERSED", "CT_TWO_REVERSED"}), f_ct_one, need="loaded-export"
    ),
    "two CTs reversed": Kind(THREE, frozenset({"CT_TWO_REVERSED"}), f_ct_two, need="loaded-import"),
    "all CTs reversed": Kind(
        THREE, frozenset({"POWER_TO_SUPPLY"}), f_ct_all, info_by_design=True, need="loaded-import"
    ),
    "clamps rotated one phase on": Kind(THREE, frozenset({"CLAMPS_ROTATED"}), f_clamps_rotated, need="loaded-import"),
    "two clamps swapped": Kind(
        THREE, frozenset({"CURRENT_SEQUENCE", "CLAMPS_SWAPPED"}), f_clamps_swapped, need="loaded-import"
    ),
    "lost phase": Kind(
        ("wye 208Y/120", "wye 480Y/277", "IEC 400/230", "delta 480"), frozenset({"PHASE_LOST"}), f_phase_lost
    ),
    "open/floating neutral": Kind(WYES, frozenset({"NEUTRAL_SHIFT"}), f_open_neutral),
    "split-phase lost neutral": Kind(("split 120/240",), frozenset({"NEUTRAL_SHIFT"}), f_split_lost_neutral),
    "high-leg halves unequal": Kind(("high-leg 240/120",), frozenset({"NEUTRAL_SHIFT"}), f_hld_halves),
    "high leg on the wrong phase": Kind(("high-leg 240/120",), frozenset({"HIGH_LEG_POSITION"}), f_high_leg_wrong),
    "voltages in phase (one lead)": Kind(WYES, frozenset({"VOLTAGES_IN_PHASE"}), f_in_phase),
    "line-to-line angles do not close": Kind(("delta 480",), frozenset({"LL_NOT_CLOSED"}), f_ll_not_closed),
    "neutral over its rating": Kind(
        WYES + ("split 120/240",), frozenset({"NEUTRAL_OVERLOAD"}), f_neutral_rating, need="distribution"
    ),
    "3-wire currents do not sum to 0": Kind(("delta 480",), frozenset({"CURRENT_SUM"}), f_current_sum, need="loaded"),
    "voltage lead on another phase": Kind(WYES, frozenset({"LL_MISMATCH"}), f_voltage_lead),
}


def _fits(b: Board, need: str) -> bool:
    top = max(abs(x) for x in b.i)
    if need.startswith("loaded") and top < 0.1 * b.rating:
        return False
    p = sum((x * y.conjugate()).real for x, y in zip(b.v, b.i))
    if need == "loaded-import" and p <= 0 or need == "loaded-export" and p >= 0:
        return False
    return not (need == "distribution" and b.purpose != DISTRIBUTION)


def boards(kind: str, n: int, seed: int = 0):
    """n readings of the given kind: (records, system type names)."""
    spec = KINDS[kind]
    rng = np.random.default_rng([seed, sorted(KINDS).index(kind)])
    recs, types = [], []
    while len(recs) < n:
        stype = spec.systems[int(rng.integers(len(spec.systems)))]
        b = healthy(rng, stype)
        if spec.need and not _fits(b, spec.need):
            continue
        if spec.apply is not None:
            spec.apply(rng, b)
        recs.append(read(rng, b))
        types.append(stype)
    return recs, types


def columns(recs):
    keys = list(recs[0])
    cols = {k: np.array([r[k] for r in recs], dtype=float) for k in keys}
    system = cols.pop("system").astype(np.int8)
    standard = cols.pop("standard").astype(np.int8)
    return cols, system, standard


def evaluate(kind: str, n: int, seed: int = 0, thresholds=None) -> dict:
    """Per kind: boards tried, with a warning, with an alarm, detected, named by the top finding."""
    spec = KINDS[kind]
    recs, types = boards(kind, n, seed)
    cols, system, standard = columns(recs)
    found = findings_lists(analyze(cols, system, standard, thresholds), standards=standard)
    out = Counter()
    tops = Counter()
    misses = []
    for fl, t, rec in zip(found, types, recs):
        sev = {f["severity"] for f in fl}
        named = any(f["code"] in spec.names for f in fl)
        top = fl[0]["code"] if fl else None
        out["tried"] += 1
        out["warning"] += "warning" in sev and "alarm" not in sev
        out["alarm"] += "alarm" in sev
        out["warn_or_alarm"] += bool(sev & {"warning", "alarm"})
        detected = named if spec.info_by_design else bool(sev & {"warning", "alarm"}) or named
        out["detected"] += detected
        out["named_top"] += top in spec.names
        tops[top or "-"] += 1
        if kind == "healthy" and sev & {"warning", "alarm"} or kind != "healthy" and top not in spec.names:
            misses.append((t, [f["code"] for f in fl], rec))
    return {"kind": kind, "counts": out, "tops": tops, "misses": misses, "systems": Counter(types)}
