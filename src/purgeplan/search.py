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
        # step to the feasible side of the root within the tolerance
        for _ in range(60):
            if math.isfinite(f(x)):
                return x
            x = x + (feasible_x - x) * 1e-3 if abs(feasible_x - x) > 0 else feasible_x
        return feasible_x
    a, b = feasible_x, infeasible_x
    while abs(b - a) > xtol_rel * min(a, b):
        mid = 0.5 * (a + b)
        if math.isfinite(f(mid)):
            a = mid
        else:
            b = mid
    return a


def scan_and_refine(f, lo: float, hi: float, points: int, xtol_rel: float, margin=None):
    """Global minimum of f on [lo, hi]: log grid, feasibility edges, bounded Brent.

    f returns inf where infeasible.  Returns (x_best, f_best, samples).
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
    if i > 0 and not math.isfinite(vals[i - 1]):
        left = feasibility_edge(fx, margin, grid[i], grid[i - 1], xtol_rel)
    if i < points - 1 and not math.isfinite(vals[i + 1]):
        right = feasibility_edge(fx, margin, grid[i], grid[i + 1], xtol_rel)
    if right > left:
        minimize_scalar(fx, bounds=(left, right), method="bounded",
                        options={"xatol": xtol_rel * left, "maxiter": 200})
        fx(left)
        fx(right)
    best_x, best_f = min(((x, v) for x, v in seen.items() if math.isfinite(v)),
                         key=lambda t: t[1])
    return best_x, best_f, sorted(seen.items())
