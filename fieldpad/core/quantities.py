"""The quantities of a block of readings, step by step: inputs, voltages, currents, power, nominal and high leg.

:func:`fieldpad.core.analysis.analyze_block` runs the steps in order on one namespace ``q`` (each step reads
what the earlier ones set); :func:`values` is the public result names; the finding rules
(:mod:`fieldpad.core.registry`) read the rest of ``q``.  Units: V, A, W, var, VA, degrees; NaN where the
input cannot give the quantity.
"""

from __future__ import annotations

import numpy as np

from . import motor, wiring
from . import nominal as nominal_mod
from . import rotation as rot
from .arrays import CNAN, angle, fin, index_of, max3, min3, pick, ratio
from .fields import ANALYSIS_COLUMNS, DELTA, HIGH_LEG, SPLIT, WYE
from .neutral import neutral_estimate_3ph, neutral_estimate_split, neutral_phasor_cols
from .phasors import SQRT3, polar
from .power import complex_power, power_factor, two_wattmeter_power
from .reference import fill_reference
from .sequence import ln_equivalent_from_ll, sequence_components_cols
from .unbalance import (
    max_deviation_pct_cols,
    sequence_magnitudes_from_ll,
    v0uf_cols,
    vuf_cols,
    vuf_from_ll_magnitudes,
)

#: Basis of the voltage sequence results.
BASIS_NONE, BASIS_LN, BASIS_LL, BASIS_MAG = 0, 1, 2, 3
BASIS_NAMES = {
    BASIS_NONE: None,
    BASIS_LN: "line-to-neutral phasors",
    BASIS_LL: "line-to-line phasors (line-to-neutral equivalent)",
    BASIS_MAG: "line-to-line magnitudes only (line-to-neutral equivalent)",
}


class _Q:
    """The quantities of a block, by name: what the finding rules read (``q.lost``, ``q.pf_a`` ...)."""


def inputs(cols, system, standard) -> _Q:
    q = _Q()
    q.system = system = np.asarray(system, dtype=np.int8)
    q.n = n = system.shape[0]
    nan = np.full(n, np.nan)
    q.col = col = {k: np.asarray(cols[k], dtype=float) if k in cols else nan for k in ANALYSIS_COLUMNS}
    q.standard = np.zeros(n, np.int8) if standard is None else np.asarray(standard, np.int8)
    q.iec = q.standard == 1
    q.split = split = system == SPLIT
    q.is3, q.wye, q.delta, q.high_leg_sys = ~split, system == WYE, system == DELTA, system == HIGH_LEG
    q.four_wire = ~q.delta
    q.n_ph = np.where(split, 2, 3)
    q.ma, q.mb, q.mc = col["va"], col["vb"], col["vc"]
    q.da, q.db, q.dc = col["va_deg"], col["vb_deg"], col["vc_deg"]
    # A meter that shows angles relative to VA often shows no angle for VA itself.
    q.da = fill_reference(q.ma, q.da, q.db)  # the one rule: core/reference.py
    # Split-phase uses legs A and B only: phase C is taken as absent.
    if split.any():
        q.mc, q.dc = np.where(split, np.nan, q.mc), np.where(split, np.nan, q.dc)
    q.has_ln = fin(q.ma, q.mb) & (np.isfinite(q.mc) | split)
    q.has_ln_ang = q.has_ln & fin(q.da, q.db) & (np.isfinite(q.dc) | split)
    q.Va, q.Vb, q.Vc = polar(q.ma, q.da), polar(q.mb, q.db), polar(q.mc, q.dc)
    q.expected = np.where(col["expected_rotation"] == -1, rot.ACB, rot.ABC).astype(np.int8)
    return q


def voltages(q, th) -> None:
    col, is3, split = q.col, q.is3, q.split
    lab, lbc, lca = col["vab"], col["vbc"], col["vca"]
    # As for VA: a meter showing line-to-line angles relative to Vab often shows none for Vab itself.
    col["vab_deg"] = fill_reference(lab, col["vab_deg"], col["vbc_deg"])
    q.ll_given_ang = ll_given = fin(lab, lbc, lca, col["vab_deg"], col["vbc_deg"], col["vca_deg"]) & is3
    ll_from_ln = q.has_ln_ang & is3 & ~ll_given
    Vab, Vbc, Vca = q.Va - q.Vb, q.Vb - q.Vc, q.Vc - q.Va
    # Line-to-line derived from line-to-neutral phasors, against the measured magnitudes.
    q.ll_derived = (np.abs(Vab), np.abs(Vbc), np.abs(Vca))
    if ll_given.any():
        Vab = np.where(ll_given, polar(lab, col["vab_deg"]), Vab)
        Vbc = np.where(ll_given, polar(lbc, col["vbc_deg"]), Vbc)
        Vca = np.where(ll_given, polar(lca, col["vca_deg"]), Vca)
    # Typed line-to-line phasors must close (Vab + Vbc + Vca = 0, Kirchhoff's voltage law).
    ll_mean = (np.abs(Vab) + np.abs(Vbc) + np.abs(Vca)) / 3.0
    q.ll_closure = np.where(ll_given, ratio(np.abs(Vab + Vbc + Vca), ll_mean), np.nan)
    q.ll_open = q.ll_closure > th.ll_closure_ratio
    if q.ll_open.any():
        # Three line-to-line phasors typed in phase do not close either; that is the in-phase alarm's case.
        t0, t1, t2 = (np.abs(z) for z in sequence_components_cols(Vab, Vbc, Vca))
        q.ll_open &= ~(np.fmax(t1, t2) < th.in_phase_ratio * t0)
    q.Vab, q.Vbc, q.Vca = Vab, Vbc, Vca
    has_ll_ph = (ll_given & ~q.ll_open) | ll_from_ln
    q.uab = np.where(np.isfinite(lab), lab, np.abs(Vab))
    q.ubc = np.where(np.isfinite(lbc), lbc, np.abs(Vbc))
    q.uca = np.where(np.isfinite(lca), lca, np.abs(Vca))
    q.has_ll_mag = fin(q.uab, q.ubc, q.uca) & is3

    # ---- voltage sequence components -----------------------------------
    use_ln = q.wye & q.has_ln_ang
    q.use_ll = use_ll = is3 & ~use_ln & has_ll_ph
    q.use_mag = use_mag = is3 & ~use_ln & ~use_ll & q.has_ll_mag
    q.basis = np.select([use_ln, use_ll, use_mag], [BASIS_LN, BASIS_LL, BASIS_MAG], BASIS_NONE).astype(np.int8)
    x0, x1, x2 = sequence_components_cols(q.Va, q.Vb, q.Vc)  # line-to-neutral set
    r0 = r1 = r2 = None
    if use_ll.any():
        l0, l1, l2 = sequence_components_cols(Vab, Vbc, Vca)
        e = ln_equivalent_from_ll(np.stack([l0, l1, l2], axis=-1))
        x0, x1, x2 = np.where(use_ll, CNAN, x0), np.where(use_ll, e[:, 1], x1), np.where(use_ll, e[:, 2], x2)
        # The line-to-line set decides rotation.
        r0, r1, r2 = (np.where(use_ll, np.abs(z), np.nan) for z in (l0, l1, l2))
    v_ok = use_ln | use_ll
    x0, x1, x2 = pick(v_ok, x0, CNAN), pick(v_ok, x1, CNAN), pick(v_ok, x2, CNAN)
    v0a, v1a, v2a = np.abs(x0), np.abs(x1), np.abs(x2)
    vscale = max3(v0a, v1a, v2a)
    q.vuf_pct, q.v0uf_pct = vuf_cols(v1a, v2a), v0uf_cols(v0a, v1a, v2a)
    v0_deg, v1_deg, v2_deg = angle(x0, v0a, vscale), angle(x1, v1a, vscale), angle(x2, v2a, vscale)
    if use_mag.any():
        v1m, v2m = sequence_magnitudes_from_ll(q.uab, q.ubc, q.uca)
        v1a, v2a = np.where(use_mag, v1m / SQRT3, v1a), np.where(use_mag, v2m / SQRT3, v2a)
        q.vuf_pct = np.where(use_mag, vuf_from_ll_magnitudes(q.uab, q.ubc, q.uca), q.vuf_pct)

    # ---- lowest phase over highest, and the rotation rule ----------------
    mc3 = np.where(split, np.nan, q.mc)
    q.lo_ln, q.hi_ln = min3(q.ma, q.mb, mc3), max3(q.ma, q.mb, mc3)
    lo_ll, hi_ll = min3(q.uab, q.ubc, q.uca), max3(q.uab, q.ubc, q.uca)
    q.ln_based = ln_based = (q.wye | split) & q.has_ln
    q.low_rel = ratio(np.where(ln_based, q.lo_ln, lo_ll), np.where(ln_based, q.hi_ln, hi_ll))
    q.low_ix = index_of(q.lo_ln, q.ma, q.mb, q.mc)
    if not ln_based.all():
        # Measured line-to-line: the lost phase is the one opposite the highest
        # line-to-line voltage (C lost leaves Vab whole, Vbc and Vca low).
        q.low_ix = np.where(ln_based, q.low_ix, (index_of(hi_ll, q.uab, q.ubc, q.uca) + 2) % 3).astype(np.int8)
    rot_1 = v1a if r1 is None else np.where(use_ll, r1, v1a)
    rot_2 = v2a if r2 is None else np.where(use_ll, r2, v2a)
    rot_0 = v0a if r0 is None else np.where(use_ll, r0, v0a)
    q.rcode, q.rreason = rot.rotation_from(
        rot_1, rot_2, q.low_rel, v_ok, th.collapse_ratio, th.dominance, rot_0, th.in_phase_ratio
    )
    if split.any():
        q.rreason = np.where(split, rot.REASON_NOT_3PH, q.rreason).astype(np.int8)
        q.rcode = np.where(split, rot.UNKNOWN, q.rcode).astype(np.int8)
    # Names that never contradict vuf_pct = min/max: "v1" is the sequence turning with the system (the larger),
    # "v2" the other; for an A-C-B set they are the Fortescue (A-B-C) negative and positive sequences.
    vswap = v2a > v1a
    if vswap.any():
        v1a, v2a = np.where(vswap, v2a, v1a), np.where(vswap, v1a, v2a)
        v1_deg, v2_deg = np.where(vswap, v2_deg, v1_deg), np.where(vswap, v1_deg, v2_deg)
    q.v0, q.v1, q.v2, q.v0_deg, q.v1_deg, q.v2_deg = v0a, v1a, v2a, v0_deg, v1_deg, v2_deg

    # ---- unbalance by each definition ----------------------------------
    q.lvur = pick(q.has_ll_mag, max_deviation_pct_cols(q.uab, q.ubc, q.uca), np.nan)
    pvur = max_deviation_pct_cols(q.ma, q.mb, q.mc)
    if split.any():
        pvur = np.where(split, max_deviation_pct_cols(q.ma, q.mb), pvur)
    q.pvur = pick(q.has_ln & (q.wye | split), pvur, np.nan)
    # Each phase's voltage for its current's V-I displacement: line-to-neutral on 4-wire and split-phase
    # boards; on a 3-wire delta and a high-leg delta the line-to-neutral equivalent (to the centroid of the
    # line-to-line triangle), whose phase powers add up to the total (Blondel).
    eq = q.delta | q.high_leg_sys
    q.Vref = [pick(eq, (Vab - Vca) / 3.0, q.Va), pick(eq, (Vbc - Vab) / 3.0, q.Vb), pick(eq, (Vca - Vbc) / 3.0, q.Vc)]


def currents(q, th) -> None:
    col, split = q.col, q.split
    ia_m, ib_m, ic_m = col["ia"], col["ib"], col["ic"]
    if split.any():
        ic_m = np.where(split, np.nan, ic_m)
    q.ia_m, q.ib_m, q.ic_m = ia_m, ib_m, ic_m
    q.has_i = has_i = fin(ia_m, ib_m) & (np.isfinite(ic_m) | split)
    for p, m, v in (("a", ia_m, q.Vref[0]), ("b", ib_m, q.Vref[1]), ("c", ic_m, q.Vref[2])):
        f = f"i{p}_deg"
        # The V-I displacement as typed (an alternative to the absolute angle): the current's angle is its
        # voltage's angle plus the displacement.
        vi = np.isnan(col[f]) & np.isfinite(col[f"i{p}_vi_deg"]) & (np.abs(v) > 0)
        if vi.any():
            col[f] = np.where(vi, np.degrees(np.angle(v)) + col[f"i{p}_vi_deg"], col[f])
        # A dead phase: a meter shows no angle for 0 A, and the zero phasor needs none (its angle is taken as 0).
        dead = (m == 0.0) & np.isnan(col[f])
        if dead.any():
            col[f] = np.where(dead, 0.0, col[f])
    q.has_i_ang = has_i & fin(col["ia_deg"], col["ib_deg"]) & (np.isfinite(col["ic_deg"]) | split)
    q.Ia, q.Ib, q.Ic = polar(ia_m, col["ia_deg"]), polar(ib_m, col["ib_deg"]), polar(ic_m, col["ic_deg"])
    q.i3a = i3a = q.has_i_ang & q.is3
    y0, y1, y2 = sequence_components_cols(q.Ia, q.Ib, q.Ic)
    y0, y1, y2 = pick(i3a, y0, CNAN), pick(i3a, y1, CNAN), pick(i3a, y2, CNAN)
    i0a, i1a, i2a = np.abs(y0), np.abs(y1), np.abs(y2)
    q.iscale = iscale = max3(i0a, i1a, i2a)
    i0_deg, i1_deg, i2_deg = angle(y0, i0a, iscale), angle(y1, i1a, iscale), angle(y2, i2a, iscale)
    iur = max_deviation_pct_cols(ia_m, ib_m, ic_m)
    if split.any():
        iur = np.where(split, max_deviation_pct_cols(ia_m, ib_m), iur)
    q.iur = pick(has_i, iur, np.nan)

    Ic0 = np.where(split, 0.0, q.Ic) if split.any() else q.Ic
    i_sum = neutral_phasor_cols(q.Ia, q.Ib, Ic0)
    # A 3-wire feed's line currents sum to zero (Kirchhoff's current law): the sum is a check, not a neutral.
    q.i_sum_3w = pick(q.has_i_ang & q.delta, np.abs(i_sum), np.nan)
    i_sum = pick(q.has_i_ang & q.four_wire, i_sum, CNAN)
    q.i_n_calc = np.abs(i_sum)
    i_max = max3(ia_m, ib_m, ic_m)
    q.i_n_calc_deg = angle(i_sum, q.i_n_calc, i_max)
    i_n_est = neutral_estimate_3ph(ia_m, ib_m, ic_m)
    if split.any():
        i_n_est = np.where(split, neutral_estimate_split(ia_m, ib_m), i_n_est)
    # No magnitude-only estimate on a high-leg delta: 120° spacing does not hold there (A and C are 180°
    # apart about the centre tap, and three-phase load shares the same phase currents).
    q.i_n_est = pick(has_i & q.four_wire & ~q.high_leg_sys, i_n_est, np.nan)
    q.i_max = pick(has_i, i_max, np.nan)
    q.i_n_meas = col["i_n"]
    q.i_n_diff = q.i_n_meas - q.i_n_calc

    # Current sequence against voltage sequence: a lead on the wrong phase. The same decision rule as the
    # voltages (rotation.rotation_from), without the collapse rule (uneven loads are normal) and without the
    # in-phase rule (a large I0 is normal on a 4-wire board); zero currents rotate neither way.
    q.i_rot, _ = rot.rotation_from(i1a, i2a, 1.0, i3a, th.collapse_ratio, th.dominance)
    # Currents against the system's rotation (the voltages'), not their own dominant sequence: with the
    # clamps in the opposite order, i2 > i1 and iuf_pct > 100 %. Where the rotation is unknown the
    # currents' dominant sequence is taken as positive, as for the voltages.
    iswap = np.where(q.rcode == rot.UNKNOWN, i2a > i1a, q.rcode == rot.ACB)
    if iswap.any():
        i1a, i2a = np.where(iswap, i2a, i1a), np.where(iswap, i1a, i2a)
        i1_deg, i2_deg = np.where(iswap, i2_deg, i1_deg), np.where(iswap, i1_deg, i2_deg)
    # No value where I1 is zero to within rounding (1e-9 of the largest component).
    q.iuf_pct = 100.0 * ratio(i2a, np.where(i1a > 1e-9 * iscale, i1a, np.nan))
    q.i0, q.i1, q.i2, q.i0_deg, q.i1_deg, q.i2_deg = i0a, i1a, i2a, i0_deg, i1_deg, i2_deg


def power(q) -> None:
    split, four_wire = q.split, q.four_wire
    per_phase = q.has_ln_ang & q.has_i_ang & four_wire
    Sa, Sb, Sc = complex_power(q.Va, q.Ia), complex_power(q.Vb, q.Ib), complex_power(q.Vc, q.Ic)
    q.Sa, q.Sb = pick(per_phase, Sa, CNAN), pick(per_phase, Sb, CNAN)
    q.Sc = pick(per_phase & q.is3, Sc, CNAN)
    s_tot = q.Sa + q.Sb + (np.where(split, 0.0, q.Sc) if split.any() else q.Sc)
    delta_pw = q.delta & (q.use_ll | (q.ll_given_ang & ~q.ll_open)) & q.has_i_ang
    if delta_pw.any():
        s_tot = np.where(delta_pw, two_wattmeter_power(q.Vab, q.Vbc, q.Ia, q.Ic), s_tot)
    q.p_w, q.q_var = s_tot.real, s_tot.imag
    q.s_vector = np.abs(s_tot)
    s_arith = q.ma * q.ia_m + q.mb * q.ib_m + (np.where(split, 0.0, q.mc * q.ic_m) if split.any() else q.mc * q.ic_m)
    s_arith = pick(q.has_ln & q.has_i & four_wire, s_arith, np.nan)
    q.s_va = pick(q.delta, q.s_vector, s_arith)
    # 1 where s_va (and pf) is the vector |P + jQ| (3-wire delta, two-wattmeter), 0 where it is the
    # arithmetic sum of the phases' V·I (4-wire and split-phase); -1 where s_va is unknown.
    q.s_va_vector = np.where(np.isfinite(q.s_va), np.where(q.delta, 1, 0), -1).astype(np.int8)
    q.pf = power_factor(q.p_w, q.s_va)
    q.pa, q.pb, q.pc = q.Sa.real, q.Sb.real, q.Sc.real
    q.pf_a, q.pf_b, q.pf_c = (power_factor(s.real, np.abs(s)) for s in (q.Sa, q.Sb, q.Sc))
    # Each phase's V-I displacement (against q.Vref) and the wiring hypothesis that explains it.
    cur = (q.Ia, q.Ib, np.where(split, 0.0, q.Ic))
    q.theta = [wiring.displacement_deg(v, i) for v, i in zip(q.Vref, cur)]
    imax = np.where(q.i_max > 0, q.i_max, np.nan)
    weight = [np.abs(i) / imax for i in cur]
    q.has_disp = q.has_i_ang & (
        (q.has_ln_ang & four_wire & ~q.high_leg_sys) | q.use_ll | (q.high_leg_sys & q.has_ln_ang)
    )
    q.hyp, q.hyp_gain = wiring.best_hypothesis(q.theta, weight, split, q.rcode == rot.ACB)
    q.hyp = np.where(q.has_disp, q.hyp, wiring.AS_WIRED).astype(np.int8)


def nominal(q) -> None:
    q.derate = pick(q.is3, motor.derating_factor(q.lvur), np.nan)
    q.temp_rise = pick(q.is3, motor.temperature_rise_pct(q.lvur), np.nan)
    # Compare line-to-neutral voltages for wye (nominal / √3) and split-phase
    # (nominal / 2), line-to-line voltages for delta and high-leg delta.
    q.v_nom = v_nom = q.col["nominal_v"]
    cmp_nom = nominal_mod.comparison_base(v_nom, q.ln_based, q.split, q.iec)
    q.no_range = np.isfinite(v_nom) & np.isnan(cmp_nom)
    inv_nom = ratio(1.0, cmp_nom)
    # The three phases as rows of one (3, N) array: one call per step instead of three.
    ratios = pick(q.ln_based, np.stack([q.ma, q.mb, q.mc]), np.stack([q.uab, q.ubc, q.uca])) * inv_nom
    stats = nominal_mod.status_of_ratio(ratios, q.iec)
    devs = 100.0 * (ratios - 1.0)
    # The worst phase: the worst range status first, then the largest deviation (first phase on a tie).
    k0, k1, k2 = stats * 1e6 + np.fmax(np.abs(devs), -1.0)  # fmax: NaN -> -1
    first_worst, second_worst = (k0 >= k1) & (k0 >= k2), k1 >= k2
    worst_ph = np.where(first_worst, 0, np.where(second_worst, 1, 2)).astype(np.int8)
    # Line-to-line comparisons name the pair: 3, 4, 5 = A-B, B-C, C-A (see findings.phase_label).
    q.worst_ph = np.where(q.ln_based, worst_ph, worst_ph + 3).astype(np.int8)
    q.dev_worst = np.where(first_worst, devs[0], np.where(second_worst, devs[1], devs[2]))
    q.vstat_worst = stats.max(axis=0)

    hl = q.high_leg_sys & q.has_ln
    q.high_leg_ix = np.full(q.n, -1, np.int8)
    if hl.any():
        cand = np.where((q.ma >= q.mb) & (q.ma >= q.mc), 0, np.where(q.mb >= q.mc, 1, 2))
        # A high leg is √3/2 of line-to-line, and the two low legs (180° apart about the centre tap) add up
        # to line-to-line: 208/(120 + 120) = 0.866. A plain 120/120/120 set (0.5) has no high leg.
        # Tolerance ±0.05 on the ratio: fieldpad's own margin for meter accuracy and supply unbalance.
        others = q.ma + q.mb + q.mc - q.hi_ln
        is_hl = np.abs(ratio(q.hi_ln, others) - SQRT3 / 2.0) <= 0.05
        q.high_leg_ix = np.where(hl & is_hl, cand, -1).astype(np.int8)
        # The two halves of the centre-tapped winding (the legs other than the high leg).
        lo1 = np.where(cand == 0, q.mb, q.ma)
        lo2 = np.where(cand == 2, q.mb, q.mc)
        q.halves_pct = np.where(q.high_leg_ix >= 0, max_deviation_pct_cols(lo1, lo2), np.nan)
    else:
        q.halves_pct = np.full(q.n, np.nan)
    q.no_high_leg = hl & (q.high_leg_ix < 0)


def values(q) -> dict:
    return {
        "v0": q.v0,
        "v1": q.v1,
        "v2": q.v2,
        "v0_deg": q.v0_deg,
        "v1_deg": q.v1_deg,
        "v2_deg": q.v2_deg,
        "vuf_pct": q.vuf_pct,
        "v0uf_pct": q.v0uf_pct,
        "lvur_pct": q.lvur,
        "pvur_pct": q.pvur,
        "rotation": q.rcode,
        "rotation_reason": q.rreason,
        "basis": q.basis,
        "i0": q.i0,
        "i1": q.i1,
        "i2": q.i2,
        "i0_deg": q.i0_deg,
        "i1_deg": q.i1_deg,
        "i2_deg": q.i2_deg,
        "iuf_pct": q.iuf_pct,
        "iur_pct": q.iur,
        "i_n_calc": q.i_n_calc,
        "i_n_calc_deg": q.i_n_calc_deg,
        "i_n_est": q.i_n_est,
        "i_n_diff": q.i_n_diff,
        "p_w": q.p_w,
        "q_var": q.q_var,
        "s_va": q.s_va,
        "s_va_vector": q.s_va_vector,
        "s_vector_va": q.s_vector,
        "pf": q.pf,
        "p_a_w": q.pa,
        "p_b_w": q.pb,
        "p_c_w": q.pc,
        "q_a_var": q.Sa.imag,
        "q_b_var": q.Sb.imag,
        "q_c_var": q.Sc.imag,
        "pf_a": q.pf_a,
        "pf_b": q.pf_b,
        "pf_c": q.pf_c,
        "derating": q.derate,
        "temp_rise_pct": q.temp_rise,
        "v_dev_max_pct": q.dev_worst,
        "voltage_status": q.vstat_worst,
        "high_leg": q.high_leg_ix,
        "vab": q.uab,
        "vbc": q.ubc,
        "vca": q.uca,
        "nominal_v": q.v_nom,
        "ll_closure_pct": 100.0 * q.ll_closure,
        "i_sum_3w": q.i_sum_3w,
        "wiring": q.hyp,
        "expected_rotation": q.expected,
    }
