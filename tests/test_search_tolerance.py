"""The refined minimum lies within the stated tolerance, on a minimum with no curvature.

On a smooth minimum Brent's parabolic steps land on the minimiser well within
any tolerance, so they do not show which tolerance the refinement was asked
for.  On a V-shaped minimum, f = 1 + |ln x - ln x0|, parabolic steps are of no
help and the accuracy is set by the stopping rule alone.

Stopping rule of SciPy's bounded Brent method (``_minimize_scalar_bounded``,
seen in the SciPy 1.17 source; docs/references.md section 11): it stops when
|u - m| <= 2 t - (b - a) / 2, with u the best point, m the middle of the
bracket [a, b] that holds the minimum, and t = sqrt(eps) |u| + xatol / 3.
Every point of the bracket, the minimum among them, is then within 2 t of u.
The search runs in u = ln x with xatol = xtol_rel = 1e-6 over [1e-4, 0.5],
where |u| <= ln(1e4) = 9.21, so 2 t <= 2 (1.49e-8 x 9.21 + 1e-6 / 3) = 9.41e-7
(by hand): the minimiser is found within 1e-6 in ln x, the relative 1e-6 the
README states.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from purgeplan.search import scan_and_refine

LO, HI = 1e-4, 0.5
XTOL_REL = 1e-6


def v_shape(x0: float):
    """1 + |ln x - ln x0|: minimum 1 at x0, no curvature anywhere."""
    return lambda x: 1.0 + abs(math.log(x) - math.log(x0))


def test_the_bound_from_the_stopping_rule_by_hand():
    # the largest |u| on the box is |ln 1e-4| = 9.21 (|ln 0.5| = 0.69)
    largest_u = max(abs(math.log(LO)), abs(math.log(HI)))
    bound = 2.0 * (math.sqrt(2.0 ** -52) * largest_u + XTOL_REL / 3.0)
    # 2 x (1.49e-8 x 9.21 + 3.33e-7) = 9.41e-7
    assert bound == pytest.approx(9.41e-7, rel=1e-3)
    assert bound < XTOL_REL


@settings(max_examples=100, deadline=None)
@given(x0=st.floats(math.log(LO), math.log(HI)).map(math.exp),
       points=st.sampled_from([5, 11, 17]))
def test_a_v_shaped_minimum_is_found_within_the_tolerance(x0, points):
    x, fx, _ = scan_and_refine(v_shape(x0), LO, HI, points, XTOL_REL)
    assert abs(math.log(x / x0)) <= XTOL_REL
    assert fx == 1.0 + abs(math.log(x) - math.log(x0))
