"""The outer search on functions whose minimum is known in closed form.

Each function below is written in the test with its minimiser, so every expected
point can be checked by hand.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from purgeplan.search import feasibility_edge, scan_and_refine

LO, HI = 1e-4, 0.5
LN_LO, LN_HI = math.log(LO), math.log(HI)


def log_parabola(x0: float, depth: float = 0.0, curvature: float = 1.0):
    """depth + curvature (ln x - ln x0)^2: minimum `depth` at x0."""
    return lambda x: depth + curvature * (math.log(x) - math.log(x0)) ** 2


def cut_above(f, edge: float):
    """f where x <= edge, inf (infeasible) beyond."""
    return lambda x: f(x) if x <= edge else math.inf


def cut_below(f, edge: float):
    """f where x >= edge, inf (infeasible) below."""
    return lambda x: f(x) if x >= edge else math.inf


log_points = st.floats(LN_LO, LN_HI).map(math.exp)


# ---------------------------------------------------------------------------
# an interior minimum


@settings(max_examples=200, deadline=None)
@given(x0=log_points, points=st.integers(5, 41), xtol_rel=st.sampled_from([1e-4, 1e-6]),
       depth=st.floats(-1e6, 1e6), curvature=st.floats(1e-2, 1e3))
def test_parabola_in_log_x_minimum_found_within_tolerance(x0, points, xtol_rel, depth,
                                                          curvature):
    f = log_parabola(x0, depth, curvature)
    x, fx, samples = scan_and_refine(f, LO, HI, points, xtol_rel)
    assert x == pytest.approx(x0, rel=2.0 * xtol_rel)
    assert fx == f(x)
    # the answer is the best of the points evaluated
    assert fx == min(v for _, v in samples)


def test_samples_are_every_point_evaluated_in_order():
    calls = []

    def f(x):
        calls.append(x)
        return log_parabola(0.01)(x)

    _, _, samples = scan_and_refine(f, LO, HI, 9, 1e-6)
    xs = [s for s, _ in samples]
    assert xs == sorted(xs)
    assert set(xs) == set(calls)
    assert len(calls) == len(set(calls))            # each point evaluated once
    assert xs[0] == pytest.approx(LO, rel=1e-15) and xs[-1] == pytest.approx(HI, rel=1e-15)
    assert all(v == log_parabola(0.01)(s) for s, v in samples)


def test_global_minimum_of_two_wells():
    # wells at 1e-3 (bottom 0) and 0.1 (bottom -1): the deeper one is the answer
    f = lambda x: min(log_parabola(1e-3)(x), log_parabola(0.1, depth=-1.0)(x))  # noqa: E731
    x, fx, _ = scan_and_refine(f, LO, HI, 17, 1e-6)
    assert x == pytest.approx(0.1, rel=2e-6)
    assert fx == pytest.approx(-1.0, abs=1e-9)


# ---------------------------------------------------------------------------
# minimum at the edge of the box


def test_minimum_at_the_lower_box_edge():
    x, fx, _ = scan_and_refine(lambda x: x, LO, HI, 17, 1e-6)
    assert x == LO
    assert fx == LO


def test_minimum_at_the_upper_box_edge():
    x, fx, _ = scan_and_refine(lambda x: -x, LO, HI, 17, 1e-6)
    assert x == HI
    assert fx == -HI


# ---------------------------------------------------------------------------
# minimum at a feasibility edge (the function is infinite beyond it)


@settings(max_examples=100, deadline=None)
@given(edge=st.floats(math.log(2 * LO), math.log(HI / 2)).map(math.exp))
def test_optimum_at_an_upper_feasibility_edge_by_bisection(edge):
    # the unconstrained minimum at 0.9 lies outside the box and beyond the edge
    f = cut_above(log_parabola(0.9), edge)
    x, fx, _ = scan_and_refine(f, LO, HI, 17, 1e-6)
    assert edge * (1.0 - 2e-6) <= x <= edge        # on the feasible side, within tolerance
    assert fx == f(x)
    assert math.isfinite(fx)


@settings(max_examples=100, deadline=None)
@given(edge=st.floats(math.log(2 * LO), math.log(HI / 2)).map(math.exp))
def test_optimum_at_a_lower_feasibility_edge_by_bisection(edge):
    f = cut_below(log_parabola(1e-5), edge)
    x, fx, _ = scan_and_refine(f, LO, HI, 17, 1e-6)
    assert edge <= x <= edge * (1.0 + 2e-6)
    assert math.isfinite(fx)


def test_interior_minimum_inside_a_feasible_window():
    # feasible on [0.002, 0.05] only; the minimum at 0.01 is inside the window
    f = cut_below(cut_above(log_parabola(0.01), 0.05), 0.002)
    x, _, _ = scan_and_refine(f, LO, HI, 17, 1e-6)
    assert x == pytest.approx(0.01, rel=2e-6)


# ---------------------------------------------------------------------------
# the edge found by root finding on a margin


@settings(max_examples=100, deadline=None)
@given(edge=st.floats(math.log(2 * LO), math.log(HI / 2)).map(math.exp),
       power=st.sampled_from([1.0, 3.0]))
def test_upper_edge_found_as_a_root_of_the_margin(edge, power):
    # relative violation of x <= edge, as the limits table states it: (x/edge)^p - 1
    def margin(x):
        return (x / edge) ** power - 1.0

    f = lambda x: log_parabola(0.9)(x) if margin(x) <= 1e-9 else math.inf  # noqa: E731
    x, fx, samples = scan_and_refine(f, LO, HI, 17, 1e-6, margin=margin)
    assert edge * (1.0 - 2e-6) <= x <= edge * (1.0 + 1e-9)
    assert math.isfinite(fx)
    # the root is found in fewer evaluations than bisection takes to the same tolerance
    _, _, bisected = scan_and_refine(f, LO, HI, 17, 1e-6)
    assert len(samples) < len(bisected)


def test_lower_edge_found_as_a_root_of_the_margin():
    edge = 3.1e-3

    def margin(x):
        return 1.0 - x / edge       # a "min" limit

    f = lambda x: log_parabola(1e-5)(x) if margin(x) <= 1e-9 else math.inf  # noqa: E731
    x, _, samples = scan_and_refine(f, LO, HI, 17, 1e-6, margin=margin)
    assert edge * (1.0 - 1e-9) <= x <= edge * (1.0 + 2e-6)
    _, _, bisected = scan_and_refine(f, LO, HI, 17, 1e-6)
    assert len(samples) < len(bisected)


def test_margin_unknown_falls_back_to_bisection():
    # a margin that knows nothing (None, as for an LP with freedom left) is not used
    edge = 0.0213
    f = cut_above(log_parabola(0.9), edge)
    x, _, samples = scan_and_refine(f, LO, HI, 17, 1e-6, margin=lambda _x: None)
    _, _, bisected = scan_and_refine(f, LO, HI, 17, 1e-6)
    assert edge * (1.0 - 2e-6) <= x <= edge
    assert samples == bisected


def test_edge_within_tolerance_when_infeasible_at_the_root():
    edge = 0.0213
    f = lambda x: log_parabola(0.9)(x) if x < edge else math.inf  # noqa: E731
    x, _, _ = scan_and_refine(f, LO, HI, 17, 1e-6, margin=lambda x: x / edge - 1.0)
    assert edge * (1.0 - 2e-6) <= x < edge


def test_feasibility_edge_directly():
    edge = 0.3
    f = cut_above(lambda x: x, edge)
    by_bisection = feasibility_edge(f, lambda _x: None, 0.2, 0.4, 1e-8)
    by_root = feasibility_edge(f, lambda x: x / edge - 1.0, 0.2, 0.4, 1e-8)
    for x in (by_bisection, by_root):
        assert edge * (1.0 - 2e-8) <= x <= edge


# ---------------------------------------------------------------------------
# nowhere feasible


def test_infeasible_everywhere():
    calls = []

    def f(x):
        calls.append(x)
        return math.inf

    x, fx, samples = scan_and_refine(f, LO, HI, 9, 1e-6)
    assert x is None
    assert fx == math.inf
    assert len(samples) == 9 == len(calls)
    assert all(v == math.inf for _, v in samples)


# ---------------------------------------------------------------------------
# the bracket around the best grid point, on the 17-point grid of [1e-4, 0.5]:
# grid[k] = 1e-4 x 5000^(k/16), so grid[10] = 0.02050, grid[11] = 0.03492,
# grid[15] = 0.2936 and grid[16] = 0.5


def test_minimum_between_the_first_two_grid_points():
    # 9 points: grid[0] = 1e-4, grid[1] = 2.900e-4; the minimum at 2.0e-4 is nearer
    # grid[1] in log x, so grid[1] is the best grid point and grid[0] the left bracket end
    x, _, _ = scan_and_refine(log_parabola(2.0e-4), LO, HI, 9, 1e-6)
    assert x == pytest.approx(2.0e-4, rel=2e-6)


def test_minimum_at_an_upper_edge_between_the_last_two_grid_points():
    f = cut_above(log_parabola(0.9), 0.4)
    x, _, _ = scan_and_refine(f, LO, HI, 17, 1e-6)
    assert 0.4 * (1.0 - 2e-6) <= x <= 0.4


def test_minimum_at_a_lower_edge_between_the_first_two_grid_points():
    # edge between grid[0] = 1e-4 and grid[1] = 1.703e-4; feasible up to the box end
    f = cut_below(log_parabola(1e-5), 1.3e-4)
    x, _, _ = scan_and_refine(f, LO, HI, 17, 1e-6)
    assert 1.3e-4 <= x <= 1.3e-4 * (1.0 + 2e-6)


def test_minimum_just_inside_an_upper_edge_is_refined():
    # the edge at 0.0213 lies between grid[10] and grid[11]; the minimum at 0.021 lies
    # between grid[10] and the edge, where f falls towards it from both sides
    f = cut_above(log_parabola(0.021), 0.0213)
    x, _, _ = scan_and_refine(f, LO, HI, 17, 1e-6)
    assert x == pytest.approx(0.021, rel=2e-6)


def test_minimum_beyond_a_lower_edge_is_refined():
    # the edge at 0.025 lies between grid[10] and grid[11]; f is worse at the edge than at
    # grid[11] and the minimum at 0.033 lies between them
    f = cut_below(log_parabola(0.033), 0.025)
    x, _, _ = scan_and_refine(f, LO, HI, 17, 1e-6)
    assert x == pytest.approx(0.033, rel=2e-6)


@pytest.mark.parametrize("f", [lambda x: x, lambda x: 1.0], ids=["rising", "flat"])
def test_minimum_at_the_box_end_takes_one_more_point(f):
    """At the lower box end, f no worse than the grid and not falling one tolerance step
    inside: the end is the minimum, with no refinement, after 17 + 1 evaluations."""
    x, _, samples = scan_and_refine(f, LO, HI, 17, 1e-6)
    assert x == LO
    assert len(samples) == 18
    assert samples[1][0] == pytest.approx(LO * math.exp(1e-6), rel=1e-15)


def test_refinement_to_the_tolerance_on_a_function_not_parabolic_in_log_x():
    # f(u) = exp(u - u0) - (u - u0) with u = ln x: minimum 1 at x0 = 0.01, curvature 1
    # there but not a parabola, so the refinement stops on its tolerance, not on an exact
    # parabolic step
    u0 = math.log(0.01)
    f = lambda x: math.exp(math.log(x) - u0) - (math.log(x) - u0)  # noqa: E731
    for xtol in (1e-4, 1e-6):
        x, _, _ = scan_and_refine(f, LO, HI, 17, xtol)
        assert x == pytest.approx(0.01, rel=2.0 * xtol)


# ---------------------------------------------------------------------------
# feasibility_edge by root or bisection


def test_margin_known_on_the_feasible_side_only_uses_bisection():
    # the margin is unknown (None) where infeasible: no sign change to bracket a root
    edge = 0.3
    f = cut_above(lambda x: x, edge)
    seen_half, seen_none = [], []

    def counted(seen):
        return lambda x: (seen.append(x), f(x))[1]

    half = feasibility_edge(counted(seen_half), lambda x: x / edge - 1.0 if x <= edge else None,
                            0.2, 0.4, 1e-8)
    none = feasibility_edge(counted(seen_none), lambda _x: None, 0.2, 0.4, 1e-8)
    assert half == none
    assert seen_half == seen_none


def test_margin_unknown_inside_the_bracket_counts_as_infeasible():
    # the margin is known at both ends but not on (0.3, 0.4): those points count as beyond
    # the edge, and the root of (x / 0.3)^3 - 1 is found
    edge = 0.3
    f = cut_above(lambda x: x, edge)

    def margin(x):
        return None if edge < x < 0.4 else (x / edge) ** 3 - 1.0

    x = feasibility_edge(f, margin, 0.2, 0.4, 1e-8)
    assert edge * (1.0 - 2e-8) <= x <= edge


def test_root_infeasible_by_rounding_steps_half_a_tolerance_back():
    # margin linear in x: Brent's root is exact to 1e-12, infeasible (f is inf at x >= edge),
    # so the answer is half a tolerance inside: within one tolerance of the edge
    edge = 0.0213
    f = lambda x: x if x < edge else math.inf  # noqa: E731
    x = feasibility_edge(f, lambda x: x / edge - 1.0, 0.02, 0.03, 1e-6)
    assert edge * (1.0 - 1e-6) <= x < edge


def test_edge_before_the_root_of_the_margin_by_bisection():
    # f is infeasible from 0.0212 on, while the margin's root is at 0.0213: neither the root
    # nor half a tolerance inside is feasible, so bisection runs between 0.02 and the root
    edge = 0.0212
    f = lambda x: x if x < edge else math.inf  # noqa: E731
    x = feasibility_edge(f, lambda x: x / 0.0213 - 1.0, 0.02, 0.03, 1e-6)
    assert edge * (1.0 - 2e-6) <= x < edge
