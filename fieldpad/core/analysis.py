"""The full analysis of a batch of readings: one reading or a million, same code.

Input is a mapping of reading field name -> 1-D float array (NaN where the
field was not entered), plus per-reading system codes and voltage-standard
codes.  Output is an :class:`Analysis`: a mapping of result name -> array
(NaN where the input cannot give the quantity) and the findings as masks.

Which voltages feed which result (see :mod:`fieldpad.core` for conventions):

* ``wye`` (3-phase 4-wire): sequence components of the line-to-neutral
  phasors when the three angles are entered; otherwise from line-to-line
  phasors or, failing that, line-to-line magnitudes (then V0 is unknown).
* ``delta`` (3-phase 3-wire, measured line-to-line) and ``high-leg-delta``:
  sequence components of the line-to-line set, reported as
  line-to-neutral-equivalent (30-degree shift, V0 unknown).  For the high-leg
  delta the line-to-neutral readings (to the centre tap) give the high leg,
  the per-phase power and the neutral.
* ``split-phase`` (120/240 V): legs A and B only; no sequence components or
  rotation; leg unbalance, neutral and power.
"""
from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

import numpy as np

from . import motor, nominal
from . import rotation as rot
from .fields import DELTA, HIGH_LEG, NUMERIC_FIELDS, SPLIT, WYE
from .neutral import neutral_estimate_3ph, neutral_estimate_split
from .phasors import SQRT3, polar
from .power import complex_power, power_factor, two_wattmeter_power
from .reference import fill_reference
from .sequence import ln_equivalent_from_ll, sequence_components_cols
from .thresholds import Thresholds
from .unbalance import (
    max_deviation_pct_cols,
    sequence_magnitudes_from_ll,
    vuf_from_ll_magnitudes,
)

CNAN = complex(np.nan, np.nan)

#: Basis of the voltage sequence results.
BASIS_NONE, BASIS_LN, BASIS_LL, BASIS_MAG = 0, 1, 2, 3
BASIS_NAMES = {
    BASIS_NONE: None,
    BASIS_LN: "line-to-neutral phasors",
    BASIS_LL: "line-to-line phasors (line-to-neutral equivalent)",
    BASIS_MAG: "line-to-line magnitudes only (line-to-neutral equivalent)",
}


@dataclass
class Analysis:
    """Results of :func:`analyze`.

    ``values`` maps result name -> array of length N.  ``findings`` is a list
    of ``(code, severity, mask, value, threshold, unit, phase)``: ``mask`` is a
    bool array of length N; ``value``, ``threshold`` and ``phase`` (index 0..2,
    -1 for none) are each a number (the same for every reading), the name of a
    result in ``values``, or an array of length N that is meaningful only
    where ``mask`` is True (see :meth:`finding_field`).
    """

    n: int
    values: dict = field(default_factory=dict)
    findings: list = field(default_factory=list)

    def __getitem__(self, key):
        return self.values[key]

    def finding_field(self, item):
        """A finding's value, threshold or phase as an array of length N."""
        if isinstance(item, str):
            item = self.values[item]
        return np.broadcast_to(item, (self.n,))


def _fin(*arrays):
    out = np.isfinite(arrays[0])
    for a in arrays[1:]:
        out &= np.isfinite(a)
    return out





def _angle(z, mag, scale):
    """Angle in degrees in (-180, 180] (np.angle's range), NaN where the phasor
    is zero to within 1e-9 of ``scale``."""
    a = np.angle(z)
    np.multiply(a, 180.0 / np.pi, out=a)
    # Where mag is NaN the angle is NaN already.
    np.copyto(a, np.nan, where=mag <= 1e-9 * scale)
    return a


def _max3(a, b, c):
    return np.fmax(np.fmax(a, b), c)


def _min3(a, b, c):
    return np.fmin(np.fmin(a, b), c)


def _pick(mask, a, b):
    """np.where that skips the copy when the whole batch takes one side."""
    if mask.all():
        return a
    if not mask.any():
        return np.broadcast_to(b, np.shape(a)) if np.ndim(b) == 0 else b
    return np.where(mask, a, b)


#: Readings analysed per block: small enough that a block's arrays stay in the
#: processor's cache, large enough that numpy's per-call overhead is amortised.
BLOCK = 16_384


def default_workers() -> int:
    """Threads for a large batch: one per processor this process may run on, at
    most 8 (numpy releases the interpreter lock inside each array operation, so
    blocks run in parallel)."""
    try:
        cpus = len(os.sched_getaffinity(0))
    except AttributeError:  # not on every platform
        cpus = os.cpu_count() or 1
    return max(1, min(8, cpus))


def analyze(cols, system, standard=None, thresholds: Thresholds | None = None,
            workers: int | None = None) -> Analysis:
    """Analyse N readings (see :func:`analyze_block`) in cache-sized blocks.

    Large batches are split into blocks of ``BLOCK`` readings, analysed on
    ``workers`` threads (default :func:`default_workers`) and written into
    one set of output arrays.  A finding's per-reading value, threshold and
    phase are written only where its mask is set; the rest of those arrays
    stays zero (see :class:`Analysis`).  The result is the same as one
    :func:`analyze_block` call on the whole batch.
    """
    system = np.asarray(system, dtype=np.int8)
    n = system.shape[0]
    if n <= 2 * BLOCK:
        return analyze_block(cols, system, standard, thresholds)
    cols = {k: np.asarray(v, dtype=float) for k, v in cols.items()}
    std = None if standard is None else np.asarray(standard, np.int8)
    bounds = [(lo, min(n, lo + BLOCK)) for lo in range(0, n, BLOCK)]

    def block(lo, hi):
        return analyze_block({k: v[lo:hi] for k, v in cols.items()}, system[lo:hi],
                             None if std is None else std[lo:hi], thresholds)

    first = block(*bounds[0])
    values = {k: np.empty(n, np.asarray(v).dtype) for k, v in first.values.items()}

    def out_like(item, dtype):
        # A number or a result name is shared by every block; an array is
        # filled in only where the finding is raised.
        return item if isinstance(item, str) or np.ndim(item) == 0 else np.zeros(n, dtype)

    findings = [(code, sev, np.empty(n, bool), out_like(v, float), out_like(t, float), unit, out_like(p, np.int8))
                for code, sev, _m, v, t, unit, p in first.findings]

    def run(bound):
        _store_block(values, findings, *bound, block(*bound))

    _store_block(values, findings, *bounds[0], first)
    workers = default_workers() if workers is None else max(1, int(workers))
    if workers == 1:
        for bound in bounds[1:]:
            run(bound)
    else:
        with ThreadPoolExecutor(max_workers=workers) as pool:
            for _ in pool.map(run, bounds[1:]):
                pass
    return Analysis(n=n, values=values, findings=findings)


def _store_block(values: dict, findings: list, lo: int, hi: int, part: Analysis) -> None:
    """Write one block's results into the batch's output arrays (see :func:`analyze`)."""
    for k, v in part.values.items():
        values[k][lo:hi] = v
    for dst, src in zip(findings, part.findings):
        mask = src[2]
        dst[2][lo:hi] = mask
        if not mask.any():
            continue
        for k in (3, 4, 6):
            if isinstance(dst[k], np.ndarray):
                item = part.values[src[k]] if isinstance(src[k], str) else src[k]
                dst[k][lo:hi][mask] = np.broadcast_to(item, mask.shape)[mask]
            elif not (isinstance(src[k], str) or np.ndim(src[k]) == 0):
                raise RuntimeError(f"finding {dst[0]}: field {k} changed kind between blocks")


def analyze_block(cols, system, standard=None, thresholds: Thresholds | None = None) -> Analysis:
    """Analyse N readings.

    Parameters
    ----------
    cols : mapping of str -> array_like, each shape (N,)
        Reading fields (see ``NUMERIC_FIELDS``): magnitudes in V or A,
        angles in degrees; NaN where not entered.
    system : array_like of int, shape (N,)
        System code per reading (``SYSTEMS``).
    standard : array_like of int, shape (N,), optional
        0 = ANSI C84.1, 1 = IEC 60038 per reading (default ANSI).
    thresholds : Thresholds, optional

    Returns
    -------
    Analysis

    Notes
    -----
    Each phase is kept as its own 1-D array (structure of arrays): numpy is
    much faster on long 1-D arrays than on reductions over a short last axis.
    """
    th = thresholds or Thresholds()
    system = np.asarray(system, dtype=np.int8)
    n = system.shape[0]
    nan = np.full(n, np.nan)
    col = {k: np.asarray(cols[k], dtype=float) if k in cols else nan for k in NUMERIC_FIELDS}
    standard = np.zeros(n, np.int8) if standard is None else np.asarray(standard, np.int8)
    split = system == SPLIT
    is3 = ~split
    wye = system == WYE
    delta = system == DELTA
    four_wire = ~delta

    ma, mb, mc = col["va"], col["vb"], col["vc"]
    da, db, dc = col["va_deg"], col["vb_deg"], col["vc_deg"]
    # A meter that shows angles relative to VA often shows no angle for VA itself.
    da = fill_reference(ma, da, db)  # the one rule: core/reference.py
    # Split-phase uses legs A and B only: phase C is taken as absent.
    if split.any():
        mc = np.where(split, np.nan, mc)
        dc = np.where(split, np.nan, dc)
    n_ph = np.where(split, 2, 3)
    has_ln = np.isfinite(ma) & np.isfinite(mb) & (np.isfinite(mc) | split)
    has_ln_ang = has_ln & np.isfinite(da) & np.isfinite(db) & (np.isfinite(dc) | split)
    Va, Vb, Vc = polar(ma, da), polar(mb, db), polar(mc, dc)

    ia_m, ib_m, ic_m = col["ia"], col["ib"], col["ic"]
    if split.any():
        ic_m = np.where(split, np.nan, ic_m)
    has_i = np.isfinite(ia_m) & np.isfinite(ib_m) & (np.isfinite(ic_m) | split)
    has_i_ang = has_i & _fin(col["ia_deg"], col["ib_deg"]) & (np.isfinite(col["ic_deg"]) | split)
    # A dead phase: a meter shows no angle for 0 A, and the zero phasor needs none (its angle is taken as 0).
    for f, m in (("ia_deg", ia_m), ("ib_deg", ib_m), ("ic_deg", ic_m)):
        dead = (m == 0.0) & np.isnan(col[f])
        if dead.any():
            col[f] = np.where(dead, 0.0, col[f])
    has_i_ang = has_i & _fin(col["ia_deg"], col["ib_deg"]) & (np.isfinite(col["ic_deg"]) | split)
    Ia, Ib = polar(ia_m, col["ia_deg"]), polar(ib_m, col["ib_deg"])
    Ic = polar(ic_m, col["ic_deg"])

    # Line-to-line phasors: measured (with angles) or derived from line-to-neutral phasors.
    lab, lbc, lca = col["vab"], col["vbc"], col["vca"]
    # As for VA: a meter showing line-to-line angles relative to Vab often shows none for Vab itself.
    col["vab_deg"] = fill_reference(lab, col["vab_deg"], col["vbc_deg"])
    ll_given_ang = _fin(lab, lbc, lca, col["vab_deg"], col["vbc_deg"], col["vca_deg"]) & is3
    ll_from_ln = has_ln_ang & is3 & ~ll_given_ang
    Vab, Vbc, Vca = Va - Vb, Vb - Vc, Vc - Va
    if ll_given_ang.any():
        Vab = np.where(ll_given_ang, polar(lab, col["vab_deg"]), Vab)
        Vbc = np.where(ll_given_ang, polar(lbc, col["vbc_deg"]), Vbc)
        Vca = np.where(ll_given_ang, polar(lca, col["vca_deg"]), Vca)
    has_ll_ph = ll_given_ang | ll_from_ln
    # Line-to-line magnitudes: measured where entered, else from the phasors.
    uab = np.where(np.isfinite(lab), lab, np.abs(Vab))
    ubc = np.where(np.isfinite(lbc), lbc, np.abs(Vbc))
    uca = np.where(np.isfinite(lca), lca, np.abs(Vca))
    has_ll_mag = _fin(uab, ubc, uca) & is3

    # ---- voltage sequence components -----------------------------------
    use_ln = wye & has_ln_ang
    use_ll = is3 & ~use_ln & has_ll_ph
    use_mag = is3 & ~use_ln & ~use_ll & has_ll_mag
    basis = np.select([use_ln, use_ll, use_mag], [BASIS_LN, BASIS_LL, BASIS_MAG], BASIS_NONE).astype(np.int8)

    x0, x1, x2 = sequence_components_cols(Va, Vb, Vc)  # line-to-neutral set
    if use_ll.any():
        l0, l1, l2 = sequence_components_cols(Vab, Vbc, Vca)
        e = ln_equivalent_from_ll(np.stack([l0, l1, l2], axis=-1))
        x0 = np.where(use_ll, CNAN, x0)
        x1 = np.where(use_ll, e[:, 1], x1)
        x2 = np.where(use_ll, e[:, 2], x2)
        r0 = np.where(use_ll, np.abs(l0), np.nan)
        r1 = np.where(use_ll, np.abs(l1), np.nan)  # the line-to-line set decides rotation
        r2 = np.where(use_ll, np.abs(l2), np.nan)
    else:
        r0 = r1 = r2 = None
    v_ok = use_ln | use_ll
    x0 = _pick(v_ok, x0, CNAN)
    x1 = _pick(v_ok, x1, CNAN)
    x2 = _pick(v_ok, x2, CNAN)
    v0a, v1a, v2a = np.abs(x0), np.abs(x1), np.abs(x2)
    vscale = _max3(v0a, v1a, v2a)
    vmax12 = np.fmax(v1a, v2a)
    vuf_pct = _ratio(np.fmin(v1a, v2a), vmax12)
    v0uf_pct = _ratio(v0a, vmax12)
    v0_deg, v1_deg, v2_deg = _angle(x0, v0a, vscale), _angle(x1, v1a, vscale), _angle(x2, v2a, vscale)
    if use_mag.any():
        v1m, v2m = sequence_magnitudes_from_ll(uab, ubc, uca)
        v1a = np.where(use_mag, v1m / SQRT3, v1a)
        v2a = np.where(use_mag, v2m / SQRT3, v2a)
        vuf_pct = np.where(use_mag, vuf_from_ll_magnitudes(uab, ubc, uca), vuf_pct)

    # ---- lowest phase over highest: lost phase, and the rotation rule ------
    lo_ln, hi_ln = _min3(ma, mb, np.where(split, np.nan, mc)), _max3(ma, mb, np.where(split, np.nan, mc))
    lo_ll, hi_ll = _min3(uab, ubc, uca), _max3(uab, ubc, uca)
    ln_based = (wye | split) & has_ln
    lo = np.where(ln_based, lo_ln, lo_ll)
    hi = np.where(ln_based, hi_ln, hi_ll)
    low_rel = np.where(hi > 0, lo / np.where(hi > 0, hi, 1.0), np.nan)
    # "At or below" half: an open phase on a 3-wire feed leaves exactly 1/2 (480/240/240); the relative
    # margin keeps a ratio computed as 0.49999999999 or 0.50000000001 on the same side.
    lost = low_rel <= th.collapse_ratio * (1.0 + 1e-9)
    low_ix = np.where(ma == lo_ln, 0, np.where(mb == lo_ln, 1, 2))
    if not ln_based.all():
        # Measured line-to-line: the lost phase is the one opposite the highest
        # line-to-line voltage (C lost leaves Vab whole, Vbc and Vca low).
        hi_ll_ix = np.where(uab == hi_ll, 0, np.where(ubc == hi_ll, 1, 2))
        low_ix = np.where(ln_based, low_ix, (hi_ll_ix + 2) % 3)

    # ---- rotation --------------------------------------------------------
    rot_1 = v1a if r1 is None else np.where(use_ll, r1, v1a)
    rot_2 = v2a if r2 is None else np.where(use_ll, r2, v2a)
    rot_0 = v0a if r0 is None else np.where(use_ll, r0, v0a)
    rcode, rreason = rot.rotation_from(rot_1, rot_2, low_rel, v_ok,
                                       th.collapse_ratio, th.dominance, rot_0, th.in_phase_ratio)
    if split.any():
        rreason = np.where(split, rot.REASON_NOT_3PH, rreason).astype(np.int8)
        rcode = np.where(split, rot.UNKNOWN, rcode).astype(np.int8)

    # ---- unbalance by each definition ----------------------------------
    lvur = _pick(has_ll_mag, max_deviation_pct_cols(uab, ubc, uca), np.nan)
    pvur = max_deviation_pct_cols(ma, mb, mc)
    if split.any():
        pvur = np.where(split, max_deviation_pct_cols(ma, mb), pvur)
    pvur = _pick(has_ln & (wye | split), pvur, np.nan)

    # ---- currents --------------------------------------------------------
    i3a = has_i_ang & is3
    y0, y1, y2 = sequence_components_cols(Ia, Ib, Ic)
    y0, y1, y2 = _pick(i3a, y0, CNAN), _pick(i3a, y1, CNAN), _pick(i3a, y2, CNAN)
    i0a, i1a, i2a = np.abs(y0), np.abs(y1), np.abs(y2)
    iscale = _max3(i0a, i1a, i2a)
    i0_deg, i1_deg, i2_deg = _angle(y0, i0a, iscale), _angle(y1, i1a, iscale), _angle(y2, i2a, iscale)
    iur = max_deviation_pct_cols(ia_m, ib_m, ic_m)
    if split.any():
        iur = np.where(split, max_deviation_pct_cols(ia_m, ib_m), iur)
    iur = _pick(has_i, iur, np.nan)

    i_sum = Ia + Ib + np.where(split, 0.0, Ic) if split.any() else Ia + Ib + Ic
    i_sum = _pick(has_i_ang & four_wire, i_sum, CNAN)
    i_n_calc = np.abs(i_sum)
    i_max = _max3(ia_m, ib_m, ic_m)
    i_n_calc_deg = _angle(i_sum, i_n_calc, i_max)
    i_n_est = neutral_estimate_3ph(ia_m, ib_m, ic_m)
    if split.any():
        i_n_est = np.where(split, neutral_estimate_split(ia_m, ib_m), i_n_est)
    # No magnitude-only estimate on a high-leg delta: 120° spacing does not hold there (A and C are 180°
    # apart about the centre tap, and three-phase load shares the same phase currents).
    i_n_est = _pick(has_i & four_wire & (system != HIGH_LEG), i_n_est, np.nan)
    i_max = _pick(has_i, i_max, np.nan)
    i_n_meas = col["i_n"]
    i_n_best = np.where(np.isfinite(i_n_meas), i_n_meas, np.where(np.isfinite(i_n_calc), i_n_calc, i_n_est))
    # Neutral over the highest phase current, as a plain ratio (100·a/b/100 can land a hair above 1
    # when the two are equal, and equal is not "exceeds").
    i_n_ratio = np.where(i_max > 0, i_n_best / np.where(i_max > 0, i_max, 1.0), np.nan)
    i_n_diff = i_n_meas - i_n_calc

    # ---- power -----------------------------------------------------------
    per_phase = has_ln_ang & has_i_ang & four_wire
    Sa, Sb, Sc = complex_power(Va, Ia), complex_power(Vb, Ib), complex_power(Vc, Ic)
    Sa, Sb, Sc = _pick(per_phase, Sa, CNAN), _pick(per_phase, Sb, CNAN), _pick(per_phase & is3, Sc, CNAN)
    s_tot = Sa + Sb + (np.where(split, 0.0, Sc) if split.any() else Sc)
    delta_pw = delta & has_ll_ph & has_i_ang
    if delta_pw.any():
        s_tot = np.where(delta_pw, two_wattmeter_power(Vab, Vbc, Ia, Ic), s_tot)
    p_w, q_var = s_tot.real, s_tot.imag
    s_vector = np.abs(s_tot)
    s_arith = ma * ia_m + mb * ib_m + (np.where(split, 0.0, mc * ic_m) if split.any() else mc * ic_m)
    s_arith = _pick(has_ln & has_i & four_wire, s_arith, np.nan)
    s_va = _pick(delta, s_vector, s_arith)
    # 1 where s_va (and pf) is the vector |P + jQ| (3-wire delta, two-wattmeter), 0 where it is the
    # arithmetic sum of the phases' V·I (4-wire and split-phase); -1 where s_va is unknown.
    s_va_vector = np.where(np.isfinite(s_va), np.where(delta, 1, 0), -1).astype(np.int8)
    pf = power_factor(p_w, s_va)
    pa, pb, pc = Sa.real, Sb.real, Sc.real
    pf_a, pf_b, pf_c = power_factor(pa, np.abs(Sa)), power_factor(pb, np.abs(Sb)), power_factor(pc, np.abs(Sc))

    # ---- motors, voltage against nominal, high leg --------------------
    derate = _pick(is3, motor.derating_factor(lvur), np.nan)
    temp_rise = _pick(is3, motor.temperature_rise_pct(lvur), np.nan)

    # Compare line-to-neutral voltages for wye (nominal / √3) and split-phase
    # (nominal / 2), line-to-line voltages for delta and high-leg delta.
    v_nom = col["nominal_v"]
    iec = standard == 1
    cmp_nom = nominal.comparison_base(v_nom, ln_based, split, iec)
    no_range = np.isfinite(v_nom) & np.isnan(cmp_nom)
    inv_nom = np.where(cmp_nom > 0, 1.0 / np.where(cmp_nom > 0, cmp_nom, 1.0), np.nan)
    # The three phases as rows of one (3, N) array: one call per step instead of three.
    ratios = _pick(ln_based, np.stack([ma, mb, mc]), np.stack([uab, ubc, uca])) * inv_nom
    stats = nominal.status_of_ratio(ratios, iec)
    devs = 100.0 * (ratios - 1.0)
    # The worst phase: the worst range status first, then the largest deviation (first phase on a tie).
    keys = stats * 1e6 + np.fmax(np.abs(devs), -1.0)  # fmax: NaN -> -1
    k0, k1, k2 = keys
    first_worst, second_worst = (k0 >= k1) & (k0 >= k2), k1 >= k2
    worst_ph = np.where(first_worst, 0, np.where(second_worst, 1, 2)).astype(np.int8)
    # Line-to-line comparisons name the pair: 3, 4, 5 = A-B, B-C, C-A (see findings.phase_label).
    worst_ph = np.where(ln_based, worst_ph, worst_ph + 3).astype(np.int8)
    dev_worst = np.where(first_worst, devs[0], np.where(second_worst, devs[1], devs[2]))
    vstat_worst = stats.max(axis=0)

    hl = (system == HIGH_LEG) & has_ln
    high_leg_ix = np.full(n, -1, np.int8)
    if hl.any():
        cand = np.where((ma >= mb) & (ma >= mc), 0, np.where(mb >= mc, 1, 2))
        # A high leg is √3/2 of line-to-line, and the two low legs (180° apart about the centre tap) add up
        # to line-to-line: 208/(120 + 120) = 0.866. A plain 120/120/120 set (0.5) has no high leg.
        # Tolerance ±0.05 on the ratio: fieldpad's own margin for meter accuracy and supply unbalance.
        others = ma + mb + mc - hi_ln
        ratio = np.where(others > 0, hi_ln / np.where(others > 0, others, 1.0), np.nan)
        is_hl = np.abs(ratio - SQRT3 / 2.0) <= 0.05
        high_leg_ix = np.where(hl & is_hl, cand, -1).astype(np.int8)
    no_high_leg = hl & (high_leg_ix < 0)

    # Current sequence against voltage sequence: a lead on the wrong phase.
    # The same decision rule as the voltages (rotation.rotation_from), without the collapse rule (uneven
    # loads are normal) and without the in-phase rule (a large I0 is normal on a 4-wire board); zero
    # currents rotate neither way.
    i_rot, _ = rot.rotation_from(i1a, i2a, 1.0, i3a, th.collapse_ratio, th.dominance)

    # Names that never contradict vuf_pct = min/max: "v1" is the sequence turning with the system (the larger),
    # "v2" the other; for an A-C-B set they are the Fortescue (A-B-C) negative and positive sequences.
    vswap = v2a > v1a
    if vswap.any():
        v1a, v2a = np.where(vswap, v2a, v1a), np.where(vswap, v1a, v2a)
        v1_deg, v2_deg = np.where(vswap, v2_deg, v1_deg), np.where(vswap, v1_deg, v2_deg)
    # Currents against the system's rotation (the voltages'), not their own dominant sequence: with the
    # clamps in the opposite order, i2 > i1 and iuf_pct > 100 %. Where the rotation is unknown the
    # currents' dominant sequence is taken as positive, as for the voltages.
    iswap = np.where(rcode == rot.UNKNOWN, i2a > i1a, rcode == rot.ACB)
    if iswap.any():
        i1a, i2a = np.where(iswap, i2a, i1a), np.where(iswap, i1a, i2a)
        i1_deg, i2_deg = np.where(iswap, i2_deg, i1_deg), np.where(iswap, i1_deg, i2_deg)
    # No value where I1 is zero to within rounding (1e-9 of the largest component).
    iuf_pct = _ratio(i2a, np.where(i1a > 1e-9 * iscale, i1a, np.nan))

    values = {
        "v0": v0a, "v1": v1a, "v2": v2a, "v0_deg": v0_deg, "v1_deg": v1_deg, "v2_deg": v2_deg,
        "vuf_pct": vuf_pct, "v0uf_pct": v0uf_pct, "lvur_pct": lvur, "pvur_pct": pvur,
        "rotation": rcode, "rotation_reason": rreason, "basis": basis,
        "i0": i0a, "i1": i1a, "i2": i2a, "i0_deg": i0_deg, "i1_deg": i1_deg, "i2_deg": i2_deg,
        "iuf_pct": iuf_pct, "iur_pct": iur,
        "i_n_calc": i_n_calc, "i_n_calc_deg": i_n_calc_deg, "i_n_est": i_n_est, "i_n_diff": i_n_diff,
        "p_w": p_w, "q_var": q_var, "s_va": s_va, "s_va_vector": s_va_vector, "s_vector_va": s_vector, "pf": pf,
        "p_a_w": pa, "p_b_w": pb, "p_c_w": pc, "q_a_var": Sa.imag, "q_b_var": Sb.imag, "q_c_var": Sc.imag,
        "pf_a": pf_a, "pf_b": pf_b, "pf_c": pf_c,
        "derating": derate, "temp_rise_pct": temp_rise,
        "v_dev_max_pct": dev_worst, "voltage_status": vstat_worst, "high_leg": high_leg_ix,
        "vab": uab, "vbc": ubc, "vca": uca, "nominal_v": v_nom,
    }

    F = []  # (code, severity, mask, value, threshold, unit, phase): see Analysis
    nan1, ph_none = np.nan, -1
    F.append(("PHASE_LOST", "alarm", lost, 100.0 * low_rel, 100.0 * th.collapse_ratio, "% of highest", low_ix))
    F.append(("ROTATION_REVERSED", "alarm", rcode == rot.ACB, nan1, nan1, "", ph_none))
    in_phase = is3 & (rreason == rot.REASON_IN_PHASE) & ~lost
    # Open or floating neutral: line-to-neutral voltages shifted (zero sequence) over a balanced line-to-line
    # set. From phasors: V0/V1 above 5 %; from magnitudes: PVUR above 5 % with LVUR at most 2 % (common
    # practice: the neutral point moves, the line-to-line triangle does not; the 5 % and 2 % are fieldpad's own).
    shift = wye & ~lost & ((v0uf_pct > 5.0) | ((pvur > 5.0) & (lvur <= 2.0)))
    F.append(("NEUTRAL_SHIFT", "warning", shift, "pvur_pct", 5.0, "%", ph_none))
    F.append(("VOLTAGES_IN_PHASE", "alarm", in_phase, nan1, nan1, "", ph_none))
    F.append(("ROTATION_UNKNOWN", "info", is3 & (rcode == rot.UNKNOWN) & ~lost & ~in_phase, nan1, nan1, "",
              ph_none))
    F.append(("VOLTAGE_OUT_OF_RANGE", "alarm", vstat_worst == 2, "v_dev_max_pct", nan1, "% of nominal", worst_ph))
    F.append(("VOLTAGE_RANGE_B", "warning", (vstat_worst == 1) & ~iec, "v_dev_max_pct", nan1, "% of nominal", worst_ph))
    F.append(("VOLTAGE_NO_RANGE", "info", no_range, "nominal_v", nan1, "V", ph_none))
    F.append(("VUF_HIGH", "warning", vuf_pct > th.vuf_pct, "vuf_pct", th.vuf_pct, "%", ph_none))
    F.append(("LVUR_EXCESSIVE", "alarm", lvur > th.lvur_max_pct, "lvur_pct", th.lvur_max_pct, "%", ph_none))
    F.append(("LVUR_DERATE", "warning", (lvur > th.lvur_pct) & ~(lvur > th.lvur_max_pct), "lvur_pct",
              th.lvur_pct, "%", ph_none))
    # Uneven single-phase loads are normal on a 4-wire or split-phase distribution board, and a light load
    # says nothing about the board: there current unbalance is an info. A warning only on a 3-wire delta
    # (three-phase loads, mostly motors) carrying more than a light load (th.light_load_a on the highest phase).
    light = ~(i_max >= th.light_load_a)
    iur_high = iur > th.iur_pct
    iur_warn = iur_high & delta & ~light
    F.append(("CURRENT_UNBALANCE", "warning", iur_warn, "iur_pct", th.iur_pct, "%", ph_none))
    F.append(("CURRENT_UNBALANCE", "info", iur_high & ~iur_warn, "iur_pct", th.iur_pct, "%", ph_none))
    # A CT or current lead reversed: one phase's real power negative while the others are positive.
    n_neg = (pa < 0).astype(np.int8) + (pb < 0) + (pc < 0)
    n_pos = (pa > 0).astype(np.int8) + (pb > 0) + (pc > 0)
    # A margin: a phase is taken as reversed only at PF <= -th.ct_reversed_pf (PF -0.02 on a light phase is
    # a near-quadrature load read with the meter's angle error, not a reversed CT).
    rev_margin = ((pa < 0) & (pf_a <= -th.ct_reversed_pf)) | ((pb < 0) & (pf_b <= -th.ct_reversed_pf)) | (
        (pc < 0) & (pf_c <= -th.ct_reversed_pf))
    one_rev = per_phase & (n_neg == 1) & (n_pos == n_ph - 1) & rev_margin
    # With a reversed CT the phasor sum of the currents is wrong: judge the neutral only
    # on a measured value then.
    i_n_ratio = np.where(one_rev & ~np.isfinite(i_n_meas), np.nan, i_n_ratio)
    # A relative tolerance: |polar(12.7, θ)| can be 12.700000000000001, and equal is not "exceeds".
    over = i_n_ratio > th.neutral_overload_ratio * (1.0 + 1e-9)
    # Compared with the highest phase only (no neutral rating is entered), so at most a warning, and an
    # info on a light load.
    F.append(("NEUTRAL_OVERLOAD", "warning", over & ~light, i_n_best,
              th.neutral_overload_ratio * i_max, "A", ph_none))
    F.append(("NEUTRAL_OVERLOAD", "info", over & light, i_n_best,
              th.neutral_overload_ratio * i_max, "A", ph_none))
    F.append(("NEUTRAL_HIGH", "info", (i_n_ratio > th.neutral_ratio) & ~over,
              i_n_best, th.neutral_ratio * i_max, "A", ph_none))
    big = np.fmax(i_n_meas, i_n_calc)
    mismatch = np.abs(i_n_diff) > th.neutral_mismatch_ratio * np.where(big > 0, big, np.nan)
    F.append(("NEUTRAL_MISMATCH", "info", mismatch & (np.abs(i_n_diff) >= 1.0) & ~one_rev, "i_n_diff", nan1, "A",
              ph_none))
    rev_ix = np.where(pa < 0, 0, np.where(pb < 0, 1, 2))
    rev_pf = np.where(rev_ix == 0, pf_a, np.where(rev_ix == 1, pf_b, pf_c))
    F.append(("CT_REVERSED", "alarm", one_rev, rev_pf, nan1, "PF", rev_ix))
    # Two CTs reversed: two phases clearly negative (PF <= -ct_reversed_pf), the third positive.
    n_rev = ((pa < 0) & (pf_a <= -th.ct_reversed_pf)).astype(np.int8) + (
        (pb < 0) & (pf_b <= -th.ct_reversed_pf)) + ((pc < 0) & (pf_c <= -th.ct_reversed_pf))
    two_rev = per_phase & is3 & (n_rev == 2) & (n_pos == 1)
    pos_ix = np.where(pa > 0, 0, np.where(pb > 0, 1, 2)).astype(np.int8)
    F.append(("CT_TWO_REVERSED", "alarm", two_rev, nan1, nan1, "", pos_ix))
    # Clamps moved one phase on (A's on B, B's on C, C's on A) shift every phase's V-I angle by 120°: every
    # phase's power is then negative or near zero (PF <= 0.1 on all three; common practice). So do all CTs
    # reversed, or a board that exports: the finding names all three and says what to check.
    pf_max = _max3(pf_a, pf_b, pf_c)
    none_pos = per_phase & is3 & (pf_max <= 0.1) & np.isfinite(pf_a) & np.isfinite(pf_b) & np.isfinite(pf_c)
    F.append(("CLAMPS_ROTATED", "warning", none_pos, pf_max, 0.1, "PF", ph_none))
    wrong_i_seq = (rcode != rot.UNKNOWN) & (i_rot != rot.UNKNOWN) & (i_rot != rcode)
    F.append(("CURRENT_SEQUENCE", "warning", wrong_i_seq & ~one_rev, "iuf_pct", nan1, "%", ph_none))
    F.append(("HIGH_LEG_POSITION", "warning", (high_leg_ix >= 0) & (high_leg_ix != 1), nan1, nan1, "", "high_leg"))
    F.append(("HIGH_LEG_NOT_FOUND", "info", no_high_leg, nan1, nan1, "", ph_none))
    F.append(("MAGNITUDE_ONLY", "info", use_mag, nan1, nan1, "", ph_none))
    return Analysis(n=n, values=values, findings=F)


def _ratio(num, den):
    """100·num/den; NaN where den is not positive (no warning)."""
    return np.where(den > 0, 100.0 * num / np.where(den > 0, den, 1.0), np.nan)
