"""Rates of catalytic gas reactions: ammonia synthesis on an iron catalyst, and the
power-law and Langmuir-Hinshelwood forms whose constants a case gives.

References
----------
.. [1] D. C. Dyson and J. M. Simon, "A kinetic expression with diffusion
   correction for ammonia synthesis on industrial catalyst", Ind. Eng. Chem.
   Fundam. 7, 605 (1968), eqs 18 and 19: the Temkin-Pyzhev form fitted to
   the data of Nielsen, Kjaer and Hansen (J. Catal. 3, 68, 1964) over 149 to
   309 atm and 603 to 768 K.  The constants are as reproduced in public
   sources (the paper itself not seen); see docs/references.md, section 11.
.. [2] M. Temkin and V. Pyzhev, "Kinetics of the synthesis of ammonia on
   promoted iron catalysts", Acta Physicochim. URSS 12, 327 (1940).
.. [3] G. F. Froment and K. B. Bischoff, *Chemical Reactor Analysis and Design*,
   2nd ed., Wiley 1990, chapter 2 (rate equations of the Hougen-Watson or
   Langmuir-Hinshelwood type: kinetic group times driving force over the
   adsorption group to the power of the number of sites taking part).
.. [4] H. S. Fogler, *Elements of Chemical Reaction Engineering*, 4th ed.,
   Prentice Hall 2006, chapters 3 and 10 (power-law rates in partial
   pressures; reversible rates written with the driving force 1 - Q/K).
.. [5] K. M. Vanden Bussche and G. F. Froment, "A steady-state kinetic model for
   methanol synthesis and the water gas shift reaction on a commercial
   Cu/ZnO/Al2O3 catalyst", J. Catal. 161, 1-10 (1996): a published rate of
   the Langmuir-Hinshelwood form (docs/references.md, section 15).
"""

from __future__ import annotations

import functools
import math

import numpy as np

from .equilibrium import (
    ATM_BAR,
    dyson_simon_fugacity_coefficients,
    log10_ka_ammonia_gillespie_beattie,
)

#: Pre-exponential factor of eq. 19 of [1]_, per m3 of catalyst bed [kmol NH3/(m3 h)]
#: (twice the 8.849e14 of eq. 18: two NH3 per N2).
DYSON_SIMON_K0_KMOL_M3_H = 1.7698e15
#: Activation energy of [1]_ [cal/mol], with the gas constant in the same units.
DYSON_SIMON_E_CAL_MOL = 40765.0
R_CAL_MOL_K = 1.987
#: Temkin's alpha of [1]_ [-].
DYSON_SIMON_ALPHA = 0.5


def temkin_pyzhev_rate_kmol_m3_h(temperature_k: float, pressure_bar: float, y_n2, y_h2, y_nh3):
    """Intrinsic rate of ammonia formation per m3 of catalyst bed [kmol NH3/(m3 h)].

    r = k0 exp(-E / RT) [Ka^2 a_N2 (a_H2^3 / a_NH3^2)^alpha - (a_NH3^2 / a_H2^3)^(1 - alpha)]

    with activities a_i = phi_i y_i P (P in atm; fugacity coefficients of
    Dyson and Simon), Ka of Gillespie and Beattie for 1/2 N2 + 3/2 H2 = NH3,
    alpha = 0.5 and the constants of eq. 19 of [1]_.  The rate is zero at
    the equilibrium of the same Ka and fugacity coefficients, and positive
    below it.  Mole fractions may be arrays, and so may the temperature (one
    per column of mole fractions).  Without ammonia the forward term is
    unbounded (a property of the Temkin form).
    """
    if np.ndim(temperature_k) == 0:
        k, ka, f_n2, f_h2, f_nh3 = _temkin_pyzhev_constants(float(temperature_k), pressure_bar)
    else:
        k, ka, f_n2, f_h2, f_nh3 = np.array([_temkin_pyzhev_constants(float(t), pressure_bar)
                                             for t in np.ravel(temperature_k)]).T
    a_n2 = f_n2 * np.asarray(y_n2, dtype=float)
    a_h2 = f_h2 * np.asarray(y_h2, dtype=float)
    a_nh3 = f_nh3 * np.asarray(y_nh3, dtype=float)
    alpha = DYSON_SIMON_ALPHA
    with np.errstate(divide="ignore"):
        ratio = a_h2**3 / a_nh3**2
        return k * (ka * ka * a_n2 * ratio**alpha - ratio ** (alpha - 1.0))


@functools.lru_cache(maxsize=64)
def _temkin_pyzhev_constants(temperature_k: float, pressure_bar: float) -> tuple:
    """Rate constant, Ka and phi_i P [atm] of the rate at a temperature and pressure."""
    p_atm = pressure_bar / ATM_BAR
    phi = dyson_simon_fugacity_coefficients(temperature_k, p_atm)
    ka = 10.0 ** log10_ka_ammonia_gillespie_beattie(temperature_k)
    k = DYSON_SIMON_K0_KMOL_M3_H * math.exp(-DYSON_SIMON_E_CAL_MOL / (R_CAL_MOL_K * temperature_k))
    return k, ka, phi["N2"] * p_atm, phi["H2"] * p_atm, phi["NH3"] * p_atm


#: Constants b0..b6 of the effectiveness-factor fit of [1]_ (eq. 39, Table I) for 6 to
#: 10 mm catalyst particles, at the three pressures the paper tabulates [atm].
DYSON_SIMON_EFFECTIVENESS_TABLE = {
    150.0: (-17.539096, 0.07697849, 6.900548, -1.082790e-4, -26.42469, 4.927648e-8, 38.93727),
    225.0: (-8.2125534, 0.03774149, 6.190112, -5.354571e-5, -20.86963, 2.379142e-8, 27.88403),
    300.0: (-4.6757259, 0.02354872, 4.687353, -3.463308e-5, -11.28031, 1.540881e-8, 10.46627),
}
#: The pressures [atm] and temperatures [K] the rate and its effectiveness factor were fitted over.
DYSON_SIMON_PRESSURE_RANGE_ATM = (150.0, 300.0)
DYSON_SIMON_TEMPERATURE_RANGE_K = (603.0, 768.0)
#: N2 and inert mole fractions of the reference gas of eq. 39 (3:1 H2/N2, 12.7 % inerts).
_REFERENCE_N2 = (1.0 - 0.127) / 4.0


def dyson_simon_effectiveness_factor(temperature_k: float, pressure_bar: float, y_nh3):
    """Catalyst effectiveness factor of Dyson and Simon for 6 to 10 mm particles [-].

    eta = b0 + b1 T + b2 c + b3 T^2 + b4 c^2 + b5 T^3 + b6 c^3 (eq. 39 of [1]_, T
    in K), with c the N2 conversion of the reference gas (3:1 H2/N2 with
    12.7 % inerts) that carries the local ammonia mole fraction, c =
    y_NH3 / (2 y_N2,ref (1 + y_NH3)).  The constants are tabulated at 150, 225
    and 300 atm (Table I); between those pressures the fit is interpolated
    linearly (a choice made here, not the paper's), and outside them the
    nearest column is used (the loop's report warns of it, see
    :func:`fitted_range_warnings`).  The fit is capped at 1, the
    bound of an isothermal particle's effectiveness; where it gives zero or
    less it is returned as it is (the fit has left its range).
    """
    p_atm = pressure_bar / ATM_BAR
    columns = sorted(DYSON_SIMON_EFFECTIVENESS_TABLE)
    lo = max((p for p in columns if p <= p_atm), default=columns[0])
    hi = min((p for p in columns if p >= p_atm), default=columns[-1])
    w = 0.0 if hi == lo else (p_atm - lo) / (hi - lo)
    y = np.asarray(y_nh3, dtype=float)
    c = y / (2.0 * _REFERENCE_N2 * (1.0 + y))
    t = temperature_k

    b = [(1.0 - w) * b_lo + w * b_hi for b_lo, b_hi in
         zip(DYSON_SIMON_EFFECTIVENESS_TABLE[lo], DYSON_SIMON_EFFECTIVENESS_TABLE[hi], strict=True)]
    eta = b[0] + b[1] * t + b[3] * t * t + b[5] * t**3 + c * (b[2] + c * (b[4] + c * b[6]))
    return np.minimum(eta, 1.0)


def fitted_range_warnings(temperature_k: float, pressure_bar: float) -> list[str]:
    """Where the rate of [1]_ is used outside the conditions it was fitted over, in words."""
    p_atm = pressure_bar / ATM_BAR
    out = []
    (p_lo, p_hi), (t_lo, t_hi) = DYSON_SIMON_PRESSURE_RANGE_ATM, DYSON_SIMON_TEMPERATURE_RANGE_K
    if not p_lo <= p_atm <= p_hi:
        out.append(f"the loop's {p_atm:.4g} atm lies outside the {p_lo:g} to {p_hi:g} atm")
    if not t_lo <= temperature_k <= t_hi:
        out.append(f"the reactor's {temperature_k:.4g} K lies outside the {t_lo:g} to {t_hi:g} K")
    return [f"{where} the Temkin-Pyzhev rate of Dyson and Simon (1968) was fitted over: "
            "it is extrapolated" for where in out]


#: Gas constant [kJ/(mol K)].
R_KJ_MOL_K = 8.314462618e-3


def power_law_rate_kmol_m3_h(temperature_k: float, pressure_bar: float, y,
                             pre_exponential_kmol_m3_h: float, activation_energy_kj_mol: float,
                             orders, stoichiometry, equilibrium_rhs: float):
    """Rate of a reversible reaction in power-law form [kmol of extent/(m3 bed h)].

    r = k0 exp(-E / RT) prod_i p_i^n_i (1 - Q / K)

    with partial pressures p_i = y_i P [bar], so k0 is in kmol of extent per
    m3 of bed per hour per bar^sum(n_i), and the driving force written with
    mole fractions, Q / K = prod_i y_i^nu_i / exp(rhs), where rhs is the
    right-hand side of the reaction's own equilibrium condition (ln K less
    dnu ln(P / P0) and any fugacity terms, as
    :func:`purgeplan.coefficients.equilibrium_rhs` states it).  The rate is
    therefore zero at the equilibrium the loop computes, positive below it
    and negative beyond it (the power-law rate of [4]_, ch. 3, with the
    reversible driving force of [3]_, ch. 2).  A negative activation energy
    is an apparent one (a rate constant that falls with temperature).

    Parameters
    ----------
    temperature_k, pressure_bar : float
        Bed temperature [K] and pressure [bar].
    y : array_like, shape (C,) or (C, n)
        Mole fractions [-].
    pre_exponential_kmol_m3_h : float
        k0 [kmol/(m3 h bar^sum(n))].
    activation_energy_kj_mol : float
        E [kJ/mol].
    orders, stoichiometry : array_like, shape (C,)
        Reaction orders n_i (0 for a component not in the rate) and
        stoichiometric coefficients nu_i [-].
    equilibrium_rhs : float
        ln K - dnu ln(P / P0) - sum nu ln phi - ln K_phi [-].
    """
    y = np.asarray(y, dtype=float)
    n = np.asarray(orders, dtype=float)
    nu = np.asarray(stoichiometry, dtype=float)
    shape = (-1,) + (1,) * (y.ndim - 1)
    k = pre_exponential_kmol_m3_h * math.exp(-activation_energy_kj_mol
                                             / (R_KJ_MOL_K * temperature_k))
    with np.errstate(divide="ignore", invalid="ignore"):
        p = y * pressure_bar
        kinetic = np.prod(np.where(n.reshape(shape) == 0.0, 1.0, p ** n.reshape(shape)), axis=0)
        taking_part = nu != 0.0
        ln_q = np.sum(nu[taking_part].reshape(shape) * np.log(y[taking_part]), axis=0)
        driving = -np.expm1(ln_q - equilibrium_rhs)
        return k * kinetic * driving


def adsorption_group(temperature_k: float, pressure_bar: float, y, adsorption,
                     denominator_power: float):
    """Adsorption group of a Langmuir-Hinshelwood rate [-].

    (1 + sum_j K_j0 exp(-dH_j / RT) prod_i p_i^m_ij)^m, p_i = y_i P [bar]
    ([3]_, ch. 2: one term per adsorbed species or group, m the number of
    sites in the rate-determining step).  An exponent m_ij may be negative
    (a ratio such as p_H2O / p_H2 in [5]_).

    Parameters
    ----------
    adsorption : sequence of (float, float, array_like of shape (C,))
        Each term's K_j0 [bar^-sum(m_ij)], heat of adsorption dH_j [kJ/mol]
        (negative: adsorption is exothermic, K_j falls with temperature) and
        exponents m_ij [-].
    denominator_power : float
        m [-].
    """
    y = np.asarray(y, dtype=float)
    shape = (-1,) + (1,) * (y.ndim - 1)
    total = np.ones(y.shape[1:])
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        p = y * pressure_bar
        for k0, dh_kj_mol, exponents in adsorption:
            m = np.asarray(exponents, dtype=float).reshape(shape)
            coverage = k0 * math.exp(-dh_kj_mol / (R_KJ_MOL_K * temperature_k))
            total = total + coverage * np.prod(np.where(m == 0.0, 1.0, p**m), axis=0)
        return total**denominator_power


def langmuir_hinshelwood_rate_kmol_m3_h(temperature_k: float, pressure_bar: float, y,
                                        pre_exponential_kmol_m3_h: float,
                                        activation_energy_kj_mol: float, orders, stoichiometry,
                                        equilibrium_rhs: float, adsorption,
                                        denominator_power: float):
    """Rate of a reversible reaction in Langmuir-Hinshelwood form [kmol of extent/(m3 bed h)].

    r = k0 exp(-E / RT) prod_i p_i^n_i (1 - Q / K)
        / (1 + sum_j K_j0 exp(-dH_j / RT) prod_i p_i^m_ij)^m

    the Hougen-Watson form of [3]_ (ch. 2): the power-law rate of
    :func:`power_law_rate_kmol_m3_h` (kinetic group and driving force, same
    units and equilibrium) over :func:`adsorption_group`.  Vanden Bussche
    and Froment's methanol rate [5]_ is of this form with m = 3.
    """
    return (power_law_rate_kmol_m3_h(temperature_k, pressure_bar, y, pre_exponential_kmol_m3_h,
                                     activation_energy_kj_mol, orders, stoichiometry,
                                     equilibrium_rhs)
            / adsorption_group(temperature_k, pressure_bar, y, adsorption, denominator_power))
