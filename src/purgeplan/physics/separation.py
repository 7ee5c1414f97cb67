"""Separator vapour-liquid split for a condensing product.

Notes
-----
With the product condensing as a nearly pure liquid, Raoult's law gives its
vapour mole fraction y_p = Psat(T) / P, so for each kmol of the other
(non-condensing) vapour the separator vapour carries Psat / (P - Psat) kmol of
product (Smith, Van Ness and Abbott, *Introduction to Chemical Engineering
Thermodynamics*, 7th ed., section 10.4, Raoult's law).  Vapour pressures use
the Wagner equation with the coefficients tabulated by Poling et al. (5th ed.)
or McGarry (1983), as carried by the ``chemicals`` library; the two forms are
evaluated here, term for term as ``chemicals`` writes them, so that a
condensing product does not need that library's vapour-pressure module.
"""

from __future__ import annotations

from math import exp, sqrt


def wagner_pa(temperature_k: float, tc_k: float, pc_pa: float,
              a: float, b: float, c: float, d: float) -> float:
    """Vapour pressure by the Wagner equation in its 2.5, 5 form [Pa].

    ln(P / Pc) = (a tau + b tau^1.5 + c tau^2.5 + d tau^5) / Tr, with Tr = T / Tc
    and tau = 1 - Tr (Poling, Prausnitz and O'Connell, *The Properties of Gases
    and Liquids*, 5th ed., eq. 7-3.3; the coefficients of their Appendix A).
    Above the critical temperature Tr is held at 1, so P = Pc.
    """
    tr = temperature_k / tc_k
    if tr > 1.0:
        tr = 1.0
    tau = 1.0 - tr
    tau_rt = sqrt(tau)
    tau15 = tau * tau_rt
    tau25 = tau * tau15
    return pc_pa * exp((a + b * tau_rt + tau15 * (c + d * tau25)) * tau / tr)


def wagner_original_pa(temperature_k: float, tc_k: float, pc_pa: float,
                       a: float, b: float, c: float, d: float) -> float:
    """Vapour pressure by the original Wagner equation, 3, 6 form [Pa].

    ln(P / Pc) = (a tau + b tau^1.5 + c tau^3 + d tau^6) / Tr (Wagner 1973;
    the coefficients of McGarry 1983).  Above the critical temperature Tr is
    held at 1, so P = Pc; at 0 K it is 0.
    """
    tr = temperature_k / tc_k
    if tr > 1.0:
        tr = 1.0
    if tr == 0.0:
        return 0.0
    tau = 1.0 - tr
    tau2 = tau * tau
    return pc_pa * exp(((d * tau2 * tau + c) * tau2 + a + b * sqrt(tau)) * (tau / tr))


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
