"""Neutral current, power, motor derating, voltage ranges, rotation."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from fieldpad.core import motor, nominal
from fieldpad.core.neutral import (
    neutral_estimate_3ph,
    neutral_estimate_split,
    neutral_phasor,
)
from fieldpad.core.phasors import line_to_line, polar
from fieldpad.core.power import (
    complex_power,
    power_factor,
    sequence_power,
    two_wattmeter_power,
)
from fieldpad.core.rotation import (
    ABC,
    ACB,
    REASON_COLLAPSED,
    REASON_NO_ANGLES,
    UNKNOWN,
    rotation,
)
from fieldpad.core.sequence import sequence_components

amps = st.floats(min_value=0.0, max_value=2000.0, allow_nan=False)
angles = st.floats(min_value=-180.0, max_value=180.0, allow_nan=False)


class TestNeutral:
    def test_phasor_sum_is_three_i0(self):
        i = polar(np.array([100.0, 80.0, 60.0]), np.array([-30.0, -150.0, 90.0]))
        assert neutral_phasor(i) == pytest.approx(3 * sequence_components(i)[0])

    @settings(max_examples=300)
    @given(amps, amps, amps, angles)
    def test_estimate_equals_phasor_sum_at_120_degrees(self, a, b, c, phi):
        i = polar(np.array([a, b, c]), phi + np.array([0.0, -120.0, 120.0]))
        assert neutral_estimate_3ph(a, b, c) == pytest.approx(abs(neutral_phasor(i)), abs=1e-6 * (a + b + c + 1))

    def test_one_phase_only(self):
        # common practice: a single loaded phase returns all its current in the neutral
        assert neutral_estimate_3ph(40.0, 0.0, 0.0) == pytest.approx(40.0)
        assert neutral_estimate_split(50.0, 20.0) == pytest.approx(30.0)


class TestPower:
    def test_balanced_three_phase_power(self):
        # Textbook: P = 3·V·I·cos φ, Q = 3·V·I·sin φ for a balanced wye (any power-systems text,
        # e.g. Grainger & Stevenson 1994 section 2.7); 277 V, 100 A lagging 30°.
        v = polar(277.0, np.array([0.0, -120.0, 120.0]))
        i = polar(100.0, np.array([-30.0, -150.0, 90.0]))
        s = complex_power(v, i).sum()
        assert s.real == pytest.approx(3 * 277 * 100 * np.cos(np.pi / 6))
        assert s.imag == pytest.approx(3 * 277 * 100 * 0.5)  # Q > 0: current lags (IEEE 1459)
        assert power_factor(s.real, abs(s)) == pytest.approx(np.cos(np.pi / 6))

    @settings(max_examples=300)
    @given(
        st.lists(st.floats(min_value=1, max_value=500), min_size=6, max_size=6),
        st.lists(angles, min_size=6, max_size=6),
    )
    def test_sequence_power_identity(self, m, a):
        v = polar(np.array(m[:3]), np.array(a[:3]))
        i = polar(np.array(m[3:]), np.array(a[3:]))
        total = complex_power(v, i).sum()
        assert_allclose(sequence_power(sequence_components(v), sequence_components(i)), total, rtol=1e-9, atol=1e-6)

    @settings(max_examples=200)
    @given(
        st.lists(st.floats(min_value=1, max_value=500), min_size=5, max_size=5),
        st.lists(angles, min_size=5, max_size=5),
    )
    def test_two_wattmeter_equals_three_element_for_three_wire(self, m, a):
        # Blondel's theorem: with Ia + Ib + Ic = 0, two elements measure the total power.
        v = polar(np.array(m[:3]), np.array(a[:3]))
        ia, ib = polar(m[3], a[3]), polar(m[4], a[4])
        i = np.array([ia, ib, -(ia + ib)])
        ll = line_to_line(v)
        assert_allclose(two_wattmeter_power(ll[0], ll[1], i[0], i[2]), complex_power(v, i).sum(), rtol=1e-9, atol=1e-6)

    def test_pf_of_nothing_is_nan(self):
        assert np.isnan(power_factor(0.0, 0.0))


class TestMotor:
    def test_curve_points(self):
        # NEMA MG 1 derating curve, points read off the published figure (from memory).
        assert_allclose(motor.derating_factor([0.5, 1.0, 2.0, 3.0, 4.0, 5.0]), [1, 1, 0.95, 0.88, 0.82, 0.75])

    def test_above_five_percent_not_recommended(self):
        assert np.isnan(motor.derating_factor(5.5))

    def test_rule_of_thumb(self):
        # common practice: 3.5 % unbalance gives about 25 % extra temperature rise (2·3.5² = 24.5)
        assert motor.temperature_rise_pct(3.5) == pytest.approx(24.5)


class TestNominal:
    def test_ansi_ranges_on_120_base(self):
        # ANSI C84.1 Table 1 service voltage on a 120 V base: A 114-126, B 110-127 (from memory).
        st_ = nominal.status(np.array([114.0, 126.0, 112.0, 127.0, 109.0, 128.0]), 120.0, nominal.ANSI)
        assert st_.tolist() == [0, 0, 1, 1, 2, 2]

    def test_iec_plus_minus_ten(self):
        # IEC 60038: 230 V ±10 % -> 207..253 V
        assert nominal.status(np.array([207.0, 253.0, 206.0, 254.0]), 230.0, nominal.IEC).tolist() == [0, 0, 2, 2]

    def test_unknown_nominal(self):
        assert nominal.status(230.0, np.nan).tolist() == -1


class TestRotation:
    def _run(self, deg, mags=(277.0, 277.0, 277.0), has=True):
        v = polar(np.array(mags), np.array(deg))
        code, reason = rotation(sequence_components(v), np.array(mags), has)
        return int(code), int(reason)

    def test_abc(self):
        assert self._run([0, -120, 120])[0] == ABC
        assert self._run([0, 240, 120])[0] == ABC  # 240 and -120 are the same angle

    def test_acb(self):
        assert self._run([0, 120, -120])[0] == ACB

    def test_no_angles(self):
        assert self._run([0, -120, 120], has=False) == (UNKNOWN, REASON_NO_ANGLES)

    def test_collapsed(self):
        assert self._run([0, -120, 120], mags=(277.0, 277.0, 20.0)) == (UNKNOWN, REASON_COLLAPSED)

    def test_no_dominance(self):
        # A and B in phase: |V1| = |V2|
        assert self._run([0, 0, 120])[0] == UNKNOWN
