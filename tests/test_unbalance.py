"""Unbalance definitions: published examples, magnitude-only formulas, properties."""

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from fieldpad.core.phasors import line_to_line, polar
from fieldpad.core.sequence import sequence_components
from fieldpad.core.unbalance import (
    max_deviation_pct,
    sequence_magnitudes_from_ll,
    triangle_ok,
    v0uf,
    vuf,
    vuf_from_ll_magnitudes,
)

mags = st.floats(min_value=50.0, max_value=1000.0, allow_nan=False)
angles = st.floats(min_value=-180.0, max_value=180.0, allow_nan=False)


class TestMaxDeviation:
    def test_nema_mg1_worked_example(self):
        # NEMA MG 1 Part 14.36 (from memory; reproduced in many handbooks): 460, 467, 450 V
        # average 459 V, max deviation 9 V, unbalance 1.96 %.
        assert max_deviation_pct([460.0, 467.0, 450.0]) == pytest.approx(100 * 9 / 459)

    def test_zero_average_is_nan_not_a_warning(self):
        with np.errstate(all="raise"):
            assert np.isnan(max_deviation_pct([0.0, 0.0, 0.0]))

    def test_vectorised(self):
        out = max_deviation_pct(np.array([[460.0, 467.0, 450.0], [480.0, 480.0, 480.0]]))
        assert_allclose(out, [100 * 9 / 459, 0.0])


class TestSequenceFactors:
    def test_open_conductor_current_unbalance_is_100_percent(self):
        # Grainger & Stevenson (1994) Example 11.1 (from memory): |I1| = |I2| = 5.77 A, so |I2|/|I1| = 100 %.
        s = sequence_components(np.array([10 + 0j, -10 + 0j, 0j]))
        assert vuf(s) == pytest.approx(100.0)

    def test_grainger_example_11_2_ratio(self):
        # Grainger & Stevenson (1994) Example 11.2 (from memory): |Vab2|/|Vab1| = 288.7/763.8 = 37.8 %.
        vll = polar(np.array([1000.0, 866.0, 500.0]), np.array([0.0, -150.0, 120.0]))
        assert vuf(sequence_components(vll)) == pytest.approx(100 * 288.7 / 763.8, abs=0.05)

    def test_zero_positive_sequence_is_nan(self):
        assert np.isnan(vuf(np.zeros(3, complex)))
        assert np.isnan(v0uf(np.zeros(3, complex)))

    def test_reverse_rotation_balanced_is_zero(self):
        v = polar(230.0, np.array([0.0, 120.0, -120.0]))
        assert vuf(sequence_components(v)) == pytest.approx(0.0, abs=1e-9)


class TestMagnitudeOnly:
    def test_grainger_example_11_2_from_magnitudes(self):
        # The same triangle as Grainger & Stevenson Example 11.2 (1000, 866, 500 V), magnitudes only:
        # |Vab1| = 763.8 V, |Vab2| = 288.7 V (the book's phasor answer, from memory).
        v1, v2 = sequence_magnitudes_from_ll(1000.0, 866.0, 500.0)
        assert v1 == pytest.approx(763.8, abs=0.1)
        assert v2 == pytest.approx(288.7, abs=0.1)
        assert vuf_from_ll_magnitudes(1000.0, 866.0, 500.0) == pytest.approx(100 * 288.7 / 763.8, abs=0.05)

    def test_nema_example_iec_formula(self):
        # 460, 467, 450 V by the IEC 61000-4-30 formula; checked against the phasor result of the
        # triangle with those sides (the triangle fixes the phasors up to rotation/reflection).
        a, b, c = 460.0, 467.0, 450.0
        ang_c = np.degrees(np.arccos((a * a + b * b - c * c) / (2 * a * b)))
        # place Vab on the real axis and close the triangle Vab + Vbc + Vca = 0
        vab = a + 0j
        vbc = b * np.exp(1j * np.deg2rad(180.0 + ang_c))
        vca = -(vab + vbc)
        s = sequence_components(np.array([vab, vbc, vca]))
        assert abs(vca) == pytest.approx(c)
        assert vuf_from_ll_magnitudes(a, b, c) == pytest.approx(vuf(s), rel=1e-9)

    def test_not_a_triangle(self):
        assert not triangle_ok(100.0, 100.0, 300.0)
        assert np.isnan(vuf_from_ll_magnitudes(100.0, 100.0, 300.0))
        assert np.all(np.isnan(sequence_magnitudes_from_ll(100.0, 100.0, 300.0)))

    def test_flat_triangle_is_a_collapsed_phase(self):
        # A flat triangle (480 = 240 + 240: B midway between A and C) is a fully collapsed set: |V1| = |V2|.
        # IEC 61000-4-30 Ed.3 clause 5.7.1: beta = (480^4 + 2*240^4) / (480^2 + 2*240^2)^2 = 18/36 = 0.5,
        # so sqrt(3 - 6*beta) = 0 and u2 = 100 %.
        assert float(vuf_from_ll_magnitudes(480.0, 240.0, 240.0)) == pytest.approx(100.0)
        v1, v2 = sequence_magnitudes_from_ll(480.0, 240.0, 240.0)
        assert v1 == pytest.approx(v2)
        # A zero side is a missing voltage, not a triangle: no unbalance is made up for it (NaN, shown as null).
        assert np.isnan(vuf_from_ll_magnitudes(480.0, 0.0, 480.0))

    @settings(max_examples=400)
    @given(mags, mags, mags, angles, angles, angles)
    def test_magnitude_only_equals_phasor_result(self, m1, m2, m3, a1, a2, a3):
        # For every valid triangle the magnitude-only factor equals the phasor result.
        vll = line_to_line(polar(np.array([m1, m2, m3]), np.array([a1, a2, a3])))
        ll = np.abs(vll)
        assume(ll.min() > 1e-3 * ll.max())
        s = np.abs(sequence_components(vll))
        v1, v2 = sequence_magnitudes_from_ll(*ll)
        assert_allclose([v1, v2], [max(s[1], s[2]), min(s[1], s[2])], rtol=1e-6, atol=1e-6 * ll.max())
        assert vuf_from_ll_magnitudes(*ll) == pytest.approx(vuf(sequence_components(vll)), rel=1e-5, abs=1e-4)

    @settings(max_examples=200)
    @given(mags, mags, mags, st.floats(min_value=1e-3, max_value=1e3))
    def test_percentages_do_not_change_with_scale(self, a, b, c, k):
        assume(triangle_ok(a, b, c))
        assert_allclose(
            vuf_from_ll_magnitudes(a * k, b * k, c * k), vuf_from_ll_magnitudes(a, b, c), rtol=1e-6, atol=1e-6
        )
        assert_allclose(max_deviation_pct([a * k, b * k, c * k]), max_deviation_pct([a, b, c]), rtol=1e-9, atol=1e-9)
