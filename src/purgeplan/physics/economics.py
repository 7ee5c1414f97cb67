"""Capital annualisation and capacity scaling.

References
----------
Capital recovery factor: Peters, Timmerhaus and West, *Plant Design and
Economics for Chemical Engineers*, 5th ed., 2003, ch. 7.
Capacity scaling ("six-tenths rule") with a cost-index ratio: Turton et al.,
*Analysis, Synthesis and Design of Chemical Processes*, 3rd ed., eqs 7.1-7.3;
Silla, *Chemical Process Engineering: Design and Economics*, 2003, p. 76.
"""

from __future__ import annotations

import math


def capital_recovery_factor(discount_rate: float, life_years: float) -> float:
    """Capital recovery factor i (1+i)^n / ((1+i)^n - 1) [1/year].

    Parameters
    ----------
    discount_rate : float
        Annual discount rate i [-]; zero gives straight-line 1/n.
    life_years : float
        Economic life n [year].
    """
    # (1+i)^n - 1 through expm1/log1p stays accurate for small rates
    excess = math.expm1(life_years * math.log1p(discount_rate))
    if discount_rate == 0.0 or excess == 0.0:
        return 1.0 / life_years
    return discount_rate * (1.0 + excess) / excess


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
