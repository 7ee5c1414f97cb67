"""Dynamic balance of the inerts in a loop's gas inventory.

Notes
-----
The loop gas is taken as one well-mixed inventory of N kmol, held constant by
the pressure control (make-up matches consumption), with the inert fraction
of the reactor inlet.  Each inert j enters at a constant rate I_j [kmol/h]
and leaves in proportion to its own fraction y_j (purge and dissolved in the
liquid), G_j y_j [kmol/h]:

    N dy_j/dt = I_j - G_j y_j.

For one inert with constant flows the solution is the first-order approach
y(t) = y_ss + (y0 - y_ss) exp(-t / tau) with the time constant tau = N / G
and y_ss = I / G, and with no outlet (G = 0) the linear rise
y(t) = y0 + I t / N (a single well-mixed inventory with constant flows;
common practice).  Several inerts with different outlets have no closed
form for the time their sum reaches a limit, so the balances are integrated
(scipy's ``solve_ivp``, with the limit as a terminal event).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np


def hours_to_inert_limit(inventory_kmol: float, fractions_now: Sequence[float],
                         inert_in_kmol_h: Sequence[float], outlet_kmol_h: Sequence[float],
                         limit_fraction: float) -> float:
    """Hours until the summed inert fraction of the inventory reaches a limit [h].

    Parameters
    ----------
    inventory_kmol : float
        Gas inventory of the loop, N [kmol].
    fractions_now : sequence of float
        Mole fraction of each inert at time 0, y_j(0) [-].
    inert_in_kmol_h : sequence of float
        Constant inflow of each inert, I_j [kmol/h].
    outlet_kmol_h : sequence of float
        Outflow coefficient of each inert, G_j [kmol/h]: it leaves at G_j y_j.
    limit_fraction : float
        The limit on sum_j y_j [-].

    Returns
    -------
    float
        0 if the limit is already reached; ``math.inf`` if the fractions
        settle below it.
    """
    y0 = np.asarray(fractions_now, dtype=float)
    inflow = np.asarray(inert_in_kmol_h, dtype=float)
    out = np.asarray(outlet_kmol_h, dtype=float)
    if y0.sum() >= limit_fraction:
        return 0.0
    settled = np.where(out > 0, inflow / np.where(out > 0, out, 1.0),
                       np.where(inflow > 0, np.inf, y0))
    # each fraction moves monotonically to its settled value, so if all rise the sum
    # never passes the sum of the settled values
    if settled.sum() <= limit_fraction and np.all(settled >= y0):
        return math.inf

    def rate(_t, y):
        return (inflow - out * y) / inventory_kmol

    def reached(_t, y):
        return y.sum() - limit_fraction
    reached.terminal = True
    reached.direction = 1.0

    # long enough for the slowest inert to pass its limit: the linear rise of the
    # whole inflow with no outlet bounds the time from below, 60 time constants from above
    rise = inventory_kmol * (limit_fraction - y0.sum()) / max(inflow.sum(), 1e-300)
    taus = [inventory_kmol / g for g in out if g > 0]
    horizon = max([rise * 2.0] + [60.0 * t for t in taus])
    from scipy.integrate import solve_ivp  # here: only a loop with an inventory needs it

    sol = solve_ivp(rate, (0.0, horizon), y0, method="LSODA", events=reached,
                    rtol=1e-10, atol=1e-14)
    if sol.t_events[0].size:
        return float(sol.t_events[0][0])
    return math.inf


def hours_to_limit_closed_form(inventory_kmol: float, fraction_now: float,
                               inert_in_kmol_h: float, outlet_kmol_h: float,
                               limit_fraction: float) -> float:
    """The same for one inert, in closed form [h] (see the module notes).

    t = tau ln((y_ss - y0) / (y_ss - y_lim)) with tau = N / G, y_ss = I / G;
    t = N (y_lim - y0) / I with no outlet; ``math.inf`` if y_ss <= y_lim.
    """
    if fraction_now >= limit_fraction:
        return 0.0
    if outlet_kmol_h == 0.0:
        return (inventory_kmol * (limit_fraction - fraction_now) / inert_in_kmol_h
                if inert_in_kmol_h > 0 else math.inf)
    tau = inventory_kmol / outlet_kmol_h
    settled = inert_in_kmol_h / outlet_kmol_h
    if settled <= limit_fraction:
        return math.inf
    return tau * math.log((settled - fraction_now) / (settled - limit_fraction))
