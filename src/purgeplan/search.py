"""The outer search: the global minimum of a function of one variable on a box.

Pure functions of the function to minimise, which returns ``inf`` where the
point is infeasible.  The search scans a log-spaced grid, finds the
feasibility edge next to the best grid point (where a limit starts to bind)
by a root of the limit margin (Brent's method) or by bisection, and refines
the minimum by bounded Brent search (Brent 1973, *Algorithms for
Minimization without Derivatives*, ch. 5, through ``scipy.optimize``).
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import brentq, minimize_scalar


def feasibility_edge(f, margin, feasible_x: float, infeasible_x: float, xtol_rel: float) -> float:
    """The feasibility edge between two points, on the feasible side.

    Where the limit margin is known on both sides (an LP with no freedom left)
    the edge is a root of the margin (Brent's method); otherwise bisection.
    """
    f(feasible_x)
    f(infeasible_x)
    m_in, m_out = margin(feasible_x), margin(infeasible_x)
    if m_in is not None and m_out is not None and m_in < 0 < m_out:
        def g(a):
            f(a)
            value = margin(a)
            return value if value is not None else 1.0
        x = brentq(g, feasible_x, infeasible_x, xtol=xtol_rel * min(feasible_x, infeasible_x),
                   rtol=1e-12)
        if math.isfinite(f(x)):
            return x
        # the root's own point is just infeasible: half a tolerance towards the feasible side,
        # else bisection between the feasible point and the root
        inward = x * math.exp(math.copysign(0.5 * xtol_rel, feasible_x - x))
        if math.isfinite(f(inward)):
            return inward
        infeasible_x = x
    return _bisect(f, feasible_x, infeasible_x, xtol_rel)


def _bisect(f, a: float, b: float, xtol_rel: float) -> float:
    """Bisection for the feasibility edge between feasible a and infeasible b."""
    while abs(b - a) > xtol_rel * min(a, b):
        mid = 0.5 * (a + b)
        if math.isfinite(f(mid)):
            a = mid
        else:
            b = mid
    return a


def scan_and_refine(f, lo: float, hi: float, points: int, xtol_rel: float, margin=None):
    """Global minimum of f on [lo, hi]: log grid, feasibility edges, bounded Brent.

    f returns inf where infeasible.  The best grid point and its neighbours
    bracket the minimum; a neighbour that is infeasible is replaced by the
    feasibility edge between them.  Where the bracket ends at the box or at
    a feasibility edge and f rises from that end, the end is the minimum;
    otherwise bounded Brent search in log x refines it to ``xtol_rel``.
    Returns (x_best, f_best, samples) with every point evaluated.
    """
    margin = margin or (lambda _x: None)
    seen: dict[float, float] = {}

    def fx(x):
        x = float(x)
        if x not in seen:
            seen[x] = f(x)
        return seen[x]

    grid = np.geomspace(lo, hi, points)
    vals = [fx(a) for a in grid]
    finite = [i for i, v in enumerate(vals) if math.isfinite(v)]
    if not finite:
        return None, math.inf, sorted(seen.items())
    i = min(finite, key=lambda k: vals[k])
    left = grid[i - 1] if i > 0 else grid[i]
    right = grid[i + 1] if i < points - 1 else grid[i]
    hard = []  # ends of the bracket beyond which nothing is allowed
    if i == 0:
        hard.append((left, 1.0))
    elif not math.isfinite(vals[i - 1]):
        left = feasibility_edge(fx, margin, grid[i], grid[i - 1], xtol_rel)
        hard.append((left, 1.0))
    if i == points - 1:
        hard.append((right, -1.0))
    elif not math.isfinite(vals[i + 1]):
        right = feasibility_edge(fx, margin, grid[i], grid[i + 1], xtol_rel)
        hard.append((right, -1.0))
    if right > left and not any(_minimum_at_end(fx, end, inward, vals[i], xtol_rel)
                                for end, inward in hard):
        # in log x, where a relative tolerance is an absolute one
        minimize_scalar(lambda u: fx(math.exp(u)), bounds=(math.log(left), math.log(right)),
                        method="bounded", options={"xatol": xtol_rel, "maxiter": 200})
        fx(left)
        fx(right)
    best_x, best_f = min(((x, v) for x, v in seen.items() if math.isfinite(v)),
                         key=lambda t: t[1])
    return best_x, best_f, sorted(seen.items())


def _minimum_at_end(f, end: float, inward: float, f_grid: float, xtol_rel: float) -> bool:
    """Whether the minimum of a unimodal bracket sits at its end ``end``.

    True when f at the end is no worse than the best grid point and f rises
    one tolerance step inside: the same unimodality within the bracket that
    Brent's refinement assumes then puts the minimum at the end.
    """
    f_end = f(end)
    if not (math.isfinite(f_end) and f_end <= f_grid):
        return False
    return f(end * math.exp(inward * xtol_rel)) >= f_end
