"""Separator vapour-liquid split: a condensing product, K-values and the split they give.

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

from math import exp, log10, sqrt


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


# ---------------------------------------------------------------------------
# vapour-liquid equilibrium: K-values y/x and the split they give

#: Henry constants of gases dissolved in liquid ammonia: (H [bar] at T_ref [K], T_ref,
#: B [K]) of H(T) = H(T_ref) exp(B (1/T - 1/T_ref)).  H2 and N2 at 25 degC from the
#: measurements of Wiebe and Tremearne (1933, 1934; values from memory).  Ar and CH4
#: at 253.2 K (-20 degC), p = 7700 x and 3600 x atm, the equilibrium data of a
#: textbook problem on absorbing them from nitrogen into liquid ammonia at 175 atm
#: (Wankat, *Separation Process Engineering*, attribution from memory; the problem
#: as published online seen).  B from Larson and Black (1925): the solubility of
#: 3:1 H2/N2 in liquid ammonia "more than doubles with a 50 degC rise", so
#: B = ln 2 / (1/248.15 - 1/298.15) = 1026 K, taken for every gas.  See
#: docs/references.md section 17.
HENRY_IN_AMMONIA: dict[str, tuple[float, float, float]] = {
    "H2": (22500.0, 298.15, 1026.0),
    "N2": (17000.0, 298.15, 1026.0),
    "Ar": (7700.0 * 1.01325, 253.2, 1026.0),
    "CH4": (3600.0 * 1.01325, 253.2, 1026.0),
}


def henry_constant_bar(h_ref_bar: float, t_ref_k: float, b_k: float,
                       temperature_k: float) -> float:
    """Henry constant of a dissolved gas at a temperature, van 't Hoff form [bar].

    H(T) = H(T_ref) exp(B (1/T - 1/T_ref)); B > 0 when the gas dissolves
    more as the liquid warms, as the permanent gases do in liquid ammonia
    (Larson and Black, *Ind. Eng. Chem.* 17, 1925, 715).
    """
    return h_ref_bar * exp(b_k * (1.0 / temperature_k - 1.0 / t_ref_k))


def poynting_factor(liquid_volume_m3_mol: float, pressure_bar: float,
                    vapour_pressure_bar: float, temperature_k: float) -> float:
    """Poynting correction of a liquid's fugacity from its vapour pressure to P [-].

    exp(v_L (P - Psat) / (R T)) (Smith, Van Ness and Abbott, *Introduction to
    Chemical Engineering Thermodynamics*, 7th ed., eq. 11.44; from memory).
    """
    return exp(liquid_volume_m3_mol * (pressure_bar - vapour_pressure_bar) * 1e5
               / (8.314462618 * temperature_k))


def raoult_k_value(vapour_pressure_bar: float, pressure_bar: float,
                   poynting: float = 1.0) -> float:
    """K = y/x of a condensing component in an ideal liquid solution [-].

    Raoult's law with the Poynting correction, y P = x Psat F_P (Smith, Van Ness
    and Abbott, 7th ed., section 10.4 and eq. 11.44; from memory).  In a
    non-ideal solution the modified Raoult's law, y P = x gamma Psat F_P
    (section 10.5; from memory), multiplies this K by the activity
    coefficient gamma (:func:`purgeplan.coefficients.separator_k_values`).
    """
    return vapour_pressure_bar * poynting / pressure_bar


def henry_k_value(henry_bar: float, pressure_bar: float) -> float:
    """K = y/x of a dissolved gas by Henry's law, y P = x H [-]."""
    return henry_bar / pressure_bar


def unifac_activity_coefficients(groups: tuple, temperature_k: float,
                                 liquid_x: list[float]) -> list[float]:
    """Activity coefficients of the components of a liquid by the original UNIFAC [-].

    ``groups`` is, in component order, each component's UNIFAC subgroups as
    (subgroup number, count) pairs; ``liquid_x`` the mole fractions [-], in the
    same order.  ln gamma = ln gamma^C + ln gamma^R, the combinatorial and
    residual parts of Fredenslund, Jones and Prausnitz (*AIChE J.* 21, 1975,
    1086), with the group volumes, areas and interaction parameters of
    Hansen et al. (*Ind. Eng. Chem. Res.* 30, 1991, 2352; both citations from
    memory) as carried by the ``thermo`` library
    (``thermo.unifac.UNIFAC`` with ``UFSG`` and ``UFIP``).
    """
    from thermo.unifac import UFIP, UFSG, UNIFAC

    model = UNIFAC.from_subgroups(T=temperature_k, xs=list(liquid_x),
                                  chemgroups=[dict(g) for g in groups], version=0,
                                  interaction_data=UFIP, subgroups=UFSG)
    return [float(g) for g in model.gammas()]


def liquid_share(k_value: float, vapour_per_liquid: float) -> float:
    """Share of a component of the separator feed leaving in the liquid [-].

    With y = K x, V_c / V = K L_c / L, so L_c = S_c / (1 + K V/L): linear in
    the flows once K and the vapour-to-liquid ratio V/L are fixed.
    """
    return 1.0 / (1.0 + k_value * vapour_per_liquid)


def acentric_factor(vapour_pressure_at_0_7_tc_bar: float, pc_bar: float) -> float:
    """Pitzer's acentric factor, omega = -log10(Psat(0.7 Tc) / Pc) - 1 [-].

    (Poling, Prausnitz and O'Connell, 5th ed., eq. 2-3.1.)
    """
    return -log10(vapour_pressure_at_0_7_tc_bar / pc_bar) - 1.0


def rackett_liquid_volume_m3_mol(temperature_k: float, tc_k: float, pc_bar: float,
                                 omega: float) -> float:
    """Saturated liquid molar volume by the Rackett equation [m3/mol].

    V = (R Tc / Pc) Z_RA^(1 + (1 - Tr)^(2/7)) with Yamada and Gunn's
    Z_RA = 0.29056 - 0.08775 omega (Poling et al., 5th ed., eqs. 4-11.1 and
    4-11.2; from memory).
    """
    z_ra = 0.29056 - 0.08775 * omega
    tr = min(temperature_k / tc_k, 1.0)
    return 8.314462618 * tc_k / (pc_bar * 1e5) * z_ra ** (1.0 + (1.0 - tr) ** (2.0 / 7.0))


def peng_robinson_k_values(constants: tuple, temperature_k: float, pressure_bar: float,
                           liquid_x: list[float], vapour_y: list[float]) -> list[float]:
    """K = phi_L(x) / phi_V(y) of each component by the Peng-Robinson equation [-].

    ``constants`` is (Tc [K], Pc [Pa], omega, kij) in component order.  The
    fugacity coefficients of the liquid and of the vapour, each at its own
    composition, from the ``thermo`` library's PRMIX (Peng and Robinson,
    *Ind. Eng. Chem. Fundam.* 15, 1976, 59; the van der Waals one-fluid
    mixing rule with the binary parameters kij).  Where a composition has one
    real root the coefficients of that root are used.
    """
    from thermo.eos_mix import PRMIX

    tcs, pcs, omegas, kijs = constants
    kij = [list(row) for row in kijs]
    p_pa = pressure_bar * 1e5

    def phis(z, phase):
        eos = PRMIX(Tcs=list(tcs), Pcs=list(pcs), omegas=list(omegas), zs=z, kijs=kij,
                    T=temperature_k, P=p_pa)
        first, second = ("phis_l", "phis_g") if phase == "l" else ("phis_g", "phis_l")
        return getattr(eos, first, None) or getattr(eos, second)
    return [pl / pv for pl, pv in zip(phis(liquid_x, "l"), phis(vapour_y, "g"), strict=True)]
