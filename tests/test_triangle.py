"""The voltage triangle and its Napoleon triangles (fieldpad/core/triangle.py)."""

import numpy as np
from numpy.testing import assert_allclose

from fieldpad.core.triangle import napoleon, napoleon_sides, vertices


class TestVertices:
    def test_sides_are_the_magnitudes_and_the_centroid_is_at_zero(self):
        a, b, c = vertices([480.0, 3.0], [470.0, 4.0], [455.0, 5.0])
        assert_allclose(np.abs(a - b), [480.0, 3.0])
        assert_allclose(np.abs(b - c), [470.0, 4.0])
        assert_allclose(np.abs(c - a), [455.0, 5.0])
        assert_allclose(np.abs((a + b + c) / 3.0), 0.0, atol=1e-12)
        assert_allclose(np.angle(a, deg=True), 90.0)  # A straight up

    def test_magnitudes_that_cannot_close_a_triangle_give_nan(self):
        # 4815, 478, 484 V: the sheet's "cannot form a triangle" case (invented values).
        a, b, c = vertices(4815.0, 478.0, 484.0)
        assert np.isnan(a) and np.isnan(b) and np.isnan(c)
        outer, inner = napoleon_sides(4815.0, 478.0, 0.0)
        assert np.isnan(outer) and np.isnan(inner)


class TestNapoleon:
    def test_both_napoleon_triangles_are_equilateral(self):
        # Napoleon's theorem: Coxeter & Greitzer, Geometry Revisited (MAA 1967), §3.3 (from memory).
        a, b, c = vertices(3.0, 4.0, 5.0)
        for outer in (True, False):
            p, q, r = napoleon(a, b, c, outer=outer)
            assert_allclose([abs(p - q), abs(q - r)], [abs(r - p)] * 2)

    def test_worked_example_3_4_5_against_the_area_formula(self):
        # Sides 3, 4, 5 (a right triangle, area 6 by Heron).  outer² = (a²+b²+c²)/6 + (2/√3)·S and
        # inner² = (a²+b²+c²)/6 − (2/√3)·S (the standard Napoleon side formula; from memory), so
        # outer² = 50/6 + 12/√3 = 15.2616 (3.9066) and inner² = 50/6 − 12/√3 = 1.4051 (1.1854).
        outer, inner = napoleon_sides(3.0, 4.0, 5.0)
        assert_allclose([outer**2, inner**2], [50 / 6 + 12 / np.sqrt(3), 50 / 6 - 12 / np.sqrt(3)])
        assert_allclose([outer, inner], [3.9066, 1.1854], atol=5e-5)

    def test_difference_of_the_napoleon_areas_is_the_triangle_area(self):
        # Coxeter & Greitzer §3.3 (from memory): area(outer) − area(inner) = area(triangle).
        outer, inner = napoleon_sides(3.0, 4.0, 5.0)
        eq_area = np.sqrt(3) / 4
        assert_allclose(eq_area * (outer**2 - inner**2), 6.0)

    def test_sides_are_root3_times_the_line_to_neutral_sequence_magnitudes(self):
        # Fortescue, "Method of symmetrical co-ordinates applied to the solution of polyphase networks",
        # AIEE Trans. 37 (1918): V1 = (Va + a·Vb + a²·Vc)/3, V2 = (Va + a²·Vb + a·Vc)/3, a = e^{j120°}.
        # An unbalanced line-to-neutral set (invented): 277 V∠0°, 262 V∠-118°, 281 V∠123°.
        op = np.exp(2j * np.pi / 3)
        va, vb, vc = (m * np.exp(1j * np.radians(d)) for m, d in ((277, 0), (262, -118), (281, 123)))
        v1 = abs(va + op * vb + op**2 * vc) / 3
        v2 = abs(va + op**2 * vb + op * vc) / 3
        outer, inner = napoleon_sides(abs(va - vb), abs(vb - vc), abs(vc - va))
        assert_allclose([outer, inner], [np.sqrt(3) * v1, np.sqrt(3) * v2], rtol=1e-9)

    def test_agrees_with_the_unbalance_module(self):
        from fieldpad.core.unbalance import sequence_magnitudes_from_ll

        u = (np.array([480.0, 481.0, 300.0]), np.array([470.0, 478.0, 420.0]), np.array([455.0, 484.0, 500.0]))
        assert_allclose(np.array(napoleon_sides(*u)), np.array(sequence_magnitudes_from_ll(*u)))
