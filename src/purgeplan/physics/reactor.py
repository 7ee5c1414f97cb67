"""Reactor sizing: a reversible first-order plug-flow relation, and a catalyst bed
integrated over a rate expression.

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
from collections.abc import Callable

import numpy as np


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


#: Gauss-Legendre nodes and weights on [-1, 1] for the bed integral.
_NODES, _WEIGHTS = np.polynomial.legendre.leggauss(32)


def isothermal_bed_volume_per_feed_m3_h_kmol(
        rate: Callable[[np.ndarray], np.ndarray], inlet_fractions: np.ndarray,
        stoichiometry: np.ndarray, key: int, conversion: float,
        equilibrium_conversion: float) -> float:
    """Catalyst volume per kmol/h of bed feed to reach a conversion isothermally [m3 h/kmol].

    The plug-flow design equation for one reaction, dV = dxi / r
    (Levenspiel, *Chemical Reaction Engineering*, 3rd ed., ch. 5), written
    per kmol/h of feed with the extent xi = X y_k0 / |nu_k|:

        V / F0 = (y_k0 / |nu_k|) int_0^X dX' / r(y(X')),
        y_i(X') = (y_i0 + nu_i xi) / (1 + dnu xi).

    The volume grows without bound as X nears the equilibrium conversion
    X_e (where r = 0), and is infinite at or beyond it.  The integral is
    taken by 32-point Gauss-Legendre quadrature in s = -ln(1 - X'/X_e), in
    which the integrand stays finite up to equilibrium.

    Parameters
    ----------
    rate : callable
        Effective rate of the reaction (kmol of extent per m3 of bed per hour,
        the effectiveness factor included) at mole fractions of shape (C, n);
        where it is zero or less short of equilibrium, the volume is infinite.
    inlet_fractions : ndarray, shape (C,)
        Bed inlet mole fractions [-].
    stoichiometry : ndarray, shape (C,)
        Stoichiometric coefficients [-].
    key : int
        Index of the key reactant.
    conversion, equilibrium_conversion : float
        Per-pass conversion X of the key reactant and its equilibrium value X_e [-].
    """
    if not conversion < equilibrium_conversion:
        return math.inf
    if conversion <= 0.0:
        return 0.0
    y0 = np.asarray(inlet_fractions, dtype=float)
    nu = np.asarray(stoichiometry, dtype=float)
    per_x = y0[key] / -nu[key]                 # extent per unit conversion and feed
    top = -math.log1p(-conversion / equilibrium_conversion)
    s = 0.5 * top * (_NODES + 1.0)
    x = equilibrium_conversion * -np.expm1(-s)
    dx_ds = equilibrium_conversion * np.exp(-s)
    xi = per_x * x
    y = (y0[:, None] + nu[:, None] * xi) / (1.0 + nu.sum() * xi)
    r = rate(y)
    if np.any(r <= 0.0):
        return math.inf
    return float(per_x * 0.5 * top * (_WEIGHTS @ (dx_ds / r)))
