"""Symmetrical components against textbook worked examples and reference libraries."""

import numpy as np
import pytest
import scipy.fft
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from fieldpad.core.phasors import angle_deg, line_to_line, polar, wrap_deg
from fieldpad.core.sequence import (
    A,
    ln_equivalent_from_ll,
    phases_from_sequence,
    phases_from_sequence_n,
    sequence_components,
    sequence_components_n,
)

mags = st.floats(min_value=1.0, max_value=1e4, allow_nan=False, allow_infinity=False)
angles = st.floats(min_value=-180.0, max_value=180.0, allow_nan=False, allow_infinity=False)


def phasor_sets():
    return st.tuples(mags, mags, mags, angles, angles, angles).map(lambda t: polar(np.array(t[:3]), np.array(t[3:])))


class TestTextbookExamples:
    def test_open_conductor_currents(self):
        # J. J. Grainger & W. D. Stevenson, Power System Analysis (McGraw-Hill, 1994), Example 11.1
        # (from memory; the same case is Example 8.2 of Glover, Sarma & Overbye, Power System Analysis
        # and Design, 5th ed.): one line open, Ia = 10∠0 A, Ib = 10∠180 A, Ic = 0.
        # Book answer: Ia0 = 0, Ia1 = 5.78∠-30° A, Ia2 = 5.78∠30° A.
        seq = sequence_components(np.array([10 + 0j, -10 + 0j, 0j]))
        assert abs(seq[0]) == pytest.approx(0.0, abs=1e-12)
        assert abs(seq[1]) == pytest.approx(5.7735, abs=1e-4)
        assert angle_deg(seq[1]) == pytest.approx(-30.0)
        assert abs(seq[2]) == pytest.approx(5.7735, abs=1e-4)
        assert angle_deg(seq[2]) == pytest.approx(30.0)

    def test_line_to_line_voltages_and_30_degree_shift(self):
        # Grainger & Stevenson (1994), Example 11.2 (from memory): Vab = 1000∠0, Vbc = 866.0∠-150,
        # Vca = 500∠120 V.  Book answer: Vab1 = 763.8∠-10.9°, Vab2 = 288.7∠30°;
        # line-to-neutral equivalents Van1 = 441∠-40.9°, Van2 = 166.7∠60°
        # (rounded as in the book; 763.8/√3 = 441.0).
        vll = polar(np.array([1000.0, 866.0, 500.0]), np.array([0.0, -150.0, 120.0]))
        s = sequence_components(vll)
        assert abs(s[1]) == pytest.approx(763.8, abs=0.1)
        assert angle_deg(s[1]) == pytest.approx(-10.9, abs=0.05)
        assert abs(s[2]) == pytest.approx(288.7, abs=0.1)
        assert angle_deg(s[2]) == pytest.approx(30.0, abs=0.05)
        ln = ln_equivalent_from_ll(s)
        assert np.isnan(ln[0])
        assert abs(ln[1]) == pytest.approx(441.0, abs=0.1)
        assert angle_deg(ln[1]) == pytest.approx(-40.9, abs=0.05)
        assert abs(ln[2]) == pytest.approx(166.7, abs=0.1)
        assert angle_deg(ln[2]) == pytest.approx(60.0, abs=0.05)

    def test_balanced_277_wye(self):
        # Glover, Sarma & Overbye, Power System Analysis and Design, 5th ed., Example 8.1 (from memory):
        # balanced 277 V line-to-neutral, ABC: V0 = V2 = 0, V1 = 277∠0.
        s = sequence_components(polar(277.0, np.array([0.0, -120.0, 120.0])))
        assert_allclose(np.abs(s), [0.0, 277.0, 0.0], atol=1e-9)

    def test_line_to_line_of_balanced_set_leads_by_30(self):
        # Textbook fact (any power-systems text, e.g. Grainger & Stevenson 1994 section 2.6):
        # for ABC sequence Vab = √3·Van∠+30°.
        ll = line_to_line(polar(277.0, np.array([0.0, -120.0, 120.0])))
        assert_allclose(np.abs(ll), 277.0 * np.sqrt(3.0))
        assert_allclose(angle_deg(ll), [30.0, -90.0, 150.0])


class TestAgainstReferenceLibraries:
    def test_sympy_exact_fortescue(self):
        # SymPy builds the transform exactly with a = -1/2 + j√3/2; evaluate at 30 digits.
        a = sympy.Rational(-1, 2) + sympy.I * sympy.sqrt(3) / 2
        rng = np.random.default_rng(7)
        for _ in range(20):
            v = rng.normal(size=3) * 300 + 1j * rng.normal(size=3) * 300
            va, vb, vc = (sympy.Float(x.real, 30) + sympy.I * sympy.Float(x.imag, 30) for x in v)
            exact = [(va + vb + vc) / 3, (va + a * vb + a**2 * vc) / 3, (va + a**2 * vb + a * vc) / 3]
            ref = np.array([complex(sympy.N(sympy.expand(e), 30)) for e in exact])
            assert_allclose(sequence_components(v), ref, rtol=1e-12, atol=1e-9)

    @pytest.mark.parametrize("n", range(2, 13))
    def test_n_phase_is_the_inverse_dft_of_scipy(self, n):
        # The amplitude-invariant n-phase transform X_k = (1/n)·Σ w^{kp}·V_p is exactly scipy.fft.ifft.
        rng = np.random.default_rng(n)
        v = rng.normal(size=(50, n)) + 1j * rng.normal(size=(50, n))
        assert_allclose(sequence_components_n(v), scipy.fft.ifft(v, axis=-1), rtol=1e-10, atol=1e-12)
        assert_allclose(phases_from_sequence_n(sequence_components_n(v)), v, atol=1e-10)

    def test_three_phase_matches_general_form(self):
        v = np.array([[100 + 20j, -40 - 90j, -70 + 75j]])
        assert_allclose(sequence_components(v), sequence_components_n(v), atol=1e-12)

    def test_operator_a(self):
        assert A**3 == pytest.approx(1.0)
        assert 1 + A + A * A == pytest.approx(0.0, abs=1e-15)

    def test_n_out_of_range(self):
        with pytest.raises(ValueError, match="2..12"):
            sequence_components_n(np.ones((1, 13)))


class TestProperties:
    @settings(max_examples=300)
    @given(phasor_sets())
    def test_inverse_round_trips(self, v):
        assert_allclose(phases_from_sequence(sequence_components(v)), v, rtol=1e-9, atol=1e-9)

    @settings(max_examples=300)
    @given(mags, angles, st.booleans())
    def test_balanced_set_has_only_one_sequence(self, m, theta, reverse):
        step = 120.0 if reverse else -120.0
        v = polar(m, theta + np.array([0.0, step, 2 * step]))
        s = np.abs(sequence_components(v))
        assert s[0] == pytest.approx(0.0, abs=1e-9 * m)
        if reverse:
            assert s[1] == pytest.approx(0.0, abs=1e-9 * m) and s[2] == pytest.approx(m)
        else:
            assert s[2] == pytest.approx(0.0, abs=1e-9 * m) and s[1] == pytest.approx(m)

    @settings(max_examples=300)
    @given(phasor_sets())
    def test_swapping_two_phases_swaps_v1_and_v2(self, v):
        s = sequence_components(v)
        t = sequence_components(v[[0, 2, 1]])
        assert_allclose(t[[0, 2, 1]], s, rtol=1e-9, atol=1e-9)

    @given(st.lists(angles, min_size=1, max_size=20))
    def test_wrap_is_within_half_open_interval(self, a):
        w = wrap_deg(np.array(a) + 720.0)
        assert np.all((w > -180.0) & (w <= 180.0))
        assert_allclose(np.cos(np.deg2rad(w)), np.cos(np.deg2rad(a)), atol=1e-9)

    def test_vectorised_shapes(self):
        v = np.zeros((4, 5, 3), complex)
        assert sequence_components(v).shape == (4, 5, 3)


@settings(max_examples=500)
@given(st.floats(min_value=-360.0, max_value=360.0, allow_nan=False))
def test_half_angle_cos_sin_match_numpy(deg):
    from fieldpad.core.phasors import cos_sin_deg

    c, s = cos_sin_deg(deg)
    assert c == pytest.approx(np.cos(np.deg2rad(deg)), abs=1e-14)
    assert s == pytest.approx(np.sin(np.deg2rad(deg)), abs=1e-14)


def test_half_angle_at_180():
    from fieldpad.core.phasors import cos_sin_deg

    c, s = cos_sin_deg(np.array([180.0, -180.0, 90.0, np.nan]))
    assert_allclose(c[:3], [-1.0, -1.0, 0.0], atol=1e-15)
    assert np.isnan(c[3]) and np.isnan(s[3])
