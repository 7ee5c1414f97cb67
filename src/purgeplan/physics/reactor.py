"""Reactor sizing from a reversible first-order plug-flow relation.

Notes
-----
For A = R, first order both ways, plug flow and no product in the feed,

    k tau = X_e ln(X_e / (X_e - X))

(Levenspiel, *Chemical Reaction Engineering*, 3rd ed., Wiley 1999, ch. 5,
reversible first-order reaction in a plug-flow reactor; the equation number
is not quoted here).  Calibrated at one reference design point, the catalyst
volume at the same temperature and pressure scales with the inlet molar flow
and with this function, so that V = V_ref (F/F_ref) g(X, X_e) / g(X_ref, X_e,ref).
"""

from __future__ import annotations

import math


def first_order_reversible_pfr_ktau(conversion: float, equilibrium_conversion: float) -> float:
    """Dimensionless size k tau of a reversible first-order plug-flow reactor [-].

    Parameters
    ----------
    conversion : float
        Per-pass conversion X [-], 0 <= X < X_e.
    equilibrium_conversion : float
        Equilibrium conversion X_e [-] at the reactor inlet composition.
    """
    if not 0.0 <= conversion < equilibrium_conversion:
        raise ValueError(f"conversion {conversion:.6g} must lie in "
                         f"[0, equilibrium {equilibrium_conversion:.6g})")
    return equilibrium_conversion * math.log(equilibrium_conversion /
                                             (equilibrium_conversion - conversion))


#: Molar volume of an ideal gas at 0 degC and 1 atm [m3/kmol] (normal cubic metres).
NORMAL_MOLAR_VOLUME_M3_KMOL = 22.414


def catalyst_volume_from_space_velocity_m3(feed_kmol_h, space_velocity_per_h: float):
    """Catalyst volume at a set gas hourly space velocity [m3].

    V = F v_N / GHSV, with the feed in normal cubic metres per hour (common
    practice for sizing synthesis converters at a fixed space velocity).

    Parameters
    ----------
    feed_kmol_h : float or expression
        Reactor feed [kmol/h].
    space_velocity_per_h : float
        Gas hourly space velocity at normal conditions [Nm3/(m3 h)].
    """
    return feed_kmol_h * NORMAL_MOLAR_VOLUME_M3_KMOL / space_velocity_per_h
