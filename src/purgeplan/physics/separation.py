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


def dissolved_gas_released_fraction(letdown_pressure_bar: float,
                                    separator_pressure_bar: float) -> float:
    """Fraction of a dissolved gas released when the liquid is let down [-].

    Henry's law, x_i = y_i P / H_i (Smith, Van Ness and Abbott, *Introduction
    to Chemical Engineering Thermodynamics*, 7th ed., section 10.4; from
    memory): the gas dissolved in the separator liquid is proportional to its
    partial pressure.  Taking the gas released at let-down to have the
    composition of the separator vapour on a product-free basis (the
    product stays liquid: its vapour pressure is below the let-down
    pressure), the liquid keeps the fraction P_letdown / P_separator of each
    dissolved gas and releases the rest, 1 - P_letdown / P_separator.

    Parameters
    ----------
    letdown_pressure_bar : float
        Pressure the liquid is let down to [bar]; below the separator's.
    separator_pressure_bar : float
        Separator pressure [bar].
    """
    if not 0.0 < letdown_pressure_bar < separator_pressure_bar:
        raise ValueError(f"let-down pressure {letdown_pressure_bar:.4g} bar is not between 0 "
                         f"and the separator pressure {separator_pressure_bar:.4g} bar")
    return 1.0 - letdown_pressure_bar / separator_pressure_bar
