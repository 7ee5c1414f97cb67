"""Capital annualisation and capacity scaling.

References
----------
Capital recovery factor: Peters, Timmerhaus and West, *Plant Design and
Economics for Chemical Engineers*, 5th ed., 2003, ch. 7.
Capacity scaling ("six-tenths rule") with a cost-index ratio: Turton et al.,
*Analysis, Synthesis and Design of Chemical Processes*, 3rd ed., eqs 7.1-7.3;
Silla, *Chemical Process Engineering: Design and Economics*, 2003, p. 76.
Vessel pressure factor: Turton et al., 3rd ed., 2009, eq. 7.10, p. 203 (the
assumed S = 944 bar, CA = 0.00315 m and t_min = 0.0063 m seen in a stored copy
of that page; the form of the equation, with the weld efficiency 0.9 that
makes S E = 850 bar, from memory).
"""

from __future__ import annotations

import math

import numpy as np

#: Rate taken for a zero discount rate: there the formula gives 1/n to rounding [-].
_ZERO_RATE = 1e-300


def capital_recovery_factor(discount_rate, life_years):
    """Capital recovery factor i (1+i)^n / ((1+i)^n - 1) [1/year].

    Parameters
    ----------
    discount_rate : float or numpy.ndarray
        Annual discount rate i [-]; zero gives straight-line 1/n.
    life_years : float or numpy.ndarray
        Economic life n [year].

    Returns a float for floats and an array (broadcast) for arrays, so that
    many price scenarios are annualised at once.
    """
    xp = np if np.ndim(discount_rate) or np.ndim(life_years) else math
    i = (np.maximum(discount_rate, _ZERO_RATE) if xp is np
         else max(float(discount_rate), _ZERO_RATE))
    # (1+i)^n - 1 through expm1/log1p stays accurate for small rates
    excess = xp.expm1(life_years * xp.log1p(i))
    return i * (1.0 + excess) / excess


def scaled_capital_cost(reference_cost: float, size, reference_size: float,
                        exponent: float, cost_index_ratio: float = 1.0):
    """Capacity-scaled installed cost C = C_ref (S/S_ref)^n (I/I_ref) [currency].

    Works on floats and on Pyomo expressions alike.

    Parameters
    ----------
    reference_cost : float
        Cost of the reference item [currency].
    size : float or expression
        Size of the new item, in the reference size's unit.
    reference_size : float
        Size of the reference item.
    exponent : float
        Capacity exponent n [-], about 0.6 for many items.
    cost_index_ratio : float
        Cost index now over cost index of the reference cost [-].
    """
    return reference_cost * cost_index_ratio * (size / reference_size) ** exponent


#: Turton et al. eq. 7.10: S E [bar], corrosion allowance [m], minimum wall [m].
VESSEL_STRESS_TIMES_WELD_EFFICIENCY_BAR = 850.0
VESSEL_CORROSION_ALLOWANCE_M = 0.00315
VESSEL_MINIMUM_WALL_M = 0.0063


def vessel_pressure_factor(pressure_barg: float, diameter_m: float) -> float:
    """Pressure factor of a carbon-steel process vessel, Turton et al. eq. 7.10 [-].

    F_P = ((P + 1) D / (2 [850 - 0.6 (P + 1)]) + 0.00315) / 0.0063, and 1 where
    the wall this gives is thinner than the 0.0063 m minimum (F_P < 1).  The
    first term is the wall thickness of a cylindrical shell under internal
    pressure (ASME VIII Div. 1 form, design pressure P + 1 barg), the second
    the corrosion allowance; the divisor is the minimum wall.

    Parameters
    ----------
    pressure_barg : float
        Operating pressure P [barg], at least -0.5 (below that Turton gives
        1.25 for vacuum service, not handled here).
    diameter_m : float
        Vessel inside diameter D [m].
    """
    design = pressure_barg + 1.0
    wall_m = design * diameter_m / (2.0 * (VESSEL_STRESS_TIMES_WELD_EFFICIENCY_BAR
                                           - 0.6 * design))
    return max(1.0, (wall_m + VESSEL_CORROSION_ALLOWANCE_M) / VESSEL_MINIMUM_WALL_M)
