"""Separator vapour-liquid split for a condensing product.

Notes
-----
With the product condensing as a nearly pure liquid, Raoult's law gives its
vapour mole fraction y_p = Psat(T) / P, so for each kmol of the other
(non-condensing) vapour the separator vapour carries Psat / (P - Psat) kmol of
product (Smith, Van Ness and Abbott, *Introduction to Chemical Engineering
Thermodynamics*, 7th ed., section 10.4, Raoult's law).  Vapour pressures use
the Wagner equation with the coefficients tabulated by Poling et al. (5th ed.)
or McGarry (1983), as carried by the ``chemicals`` library.
"""

from __future__ import annotations


def condensate_vapour_ratio(vapour_pressure_bar: float, pressure_bar: float) -> float:
    """Moles of condensing product per mole of other gas in the separator vapour [-].

    Parameters
    ----------
    vapour_pressure_bar : float
        Vapour pressure of the product at separator temperature [bar].
    pressure_bar : float
        Separator pressure [bar]; must exceed the vapour pressure.
    """
    if vapour_pressure_bar >= pressure_bar:
        raise ValueError(f"vapour pressure {vapour_pressure_bar:.4g} bar is not below "
                         f"separator pressure {pressure_bar:.4g} bar: nothing condenses")
    return vapour_pressure_bar / (pressure_bar - vapour_pressure_bar)
