"""Chemical equilibrium constants, fugacity corrections and equilibrium extents.

References
----------
.. [1] L. J. Gillespie and J. A. Beattie, "The thermodynamic treatment of
   chemical equilibria in systems composed of real gases", Phys. Rev. 36, 743
   (1930); correlation as used by D. C. Dyson and J. M. Simon, Ind. Eng.
   Chem. Fundam. 7, 605 (1968).
.. [2] H. R. Shaw and D. R. Wones, "Fugacity coefficients for hydrogen gas
   between 0 and 1000 C, for pressures to 3000 atm", Am. J. Sci. 262, 918
   (1964), doi:10.2475/ajs.262.7.918 (hydrogen); the nitrogen and ammonia
   correlations and the set of three as collected by Dyson and Simon (1968)
   (the originals of the nitrogen and ammonia fits are not quoted here).
.. [3] J. M. Smith, H. C. Van Ness and M. M. Abbott, *Introduction to Chemical
   Engineering Thermodynamics*, 7th ed., section 13.7 (K from formation data,
   temperature dependence with heat-capacity integration).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np

from .thermo import R_J_MOL_K, T_REF_K, cp_enthalpy_integral_j_mol, cp_entropy_integral_j_mol_k

ATM_BAR = 1.01325


def log10_ka_ammonia_gillespie_beattie(temperature_k: float) -> float:
    """log10 of the ammonia synthesis equilibrium constant, 1/2 N2 + 3/2 H2 = NH3.

    Notes
    -----
    log10 Ka = -2.691122 log10 T - 5.519265e-5 T + 1.848863e-7 T^2
    + 2001.6 / T + 2.6899, Ka in atm^-1 [1]_.

    Parameters
    ----------
    temperature_k : float
        Temperature [K].

    Returns
    -------
    float
        log10(Ka / atm^-1) [-].
    """
    t = temperature_k
    return (-2.691122 * math.log10(t) - 5.519265e-5 * t + 1.848863e-7 * t**2
            + 2001.6 / t + 2.6899)


def reaction_enthalpy_j_mol(delta_h_298_j_mol: float, delta_cp_coefficients: Sequence[float],
                            temperature_k: float) -> float:
    """Standard reaction enthalpy at temperature T by Kirchhoff's law [J/mol].

    Delta H(T) = Delta H(298.15 K) + int_298.15^T Delta Cp dT, Delta Cp the
    stoichiometric sum of the ideal-gas heat capacities ([3]_, section 4.6, from memory).

    Parameters
    ----------
    delta_h_298_j_mol : float
        Standard reaction enthalpy at 298.15 K, from the enthalpies of formation [J/mol].
    delta_cp_coefficients : sequence of float
        Stoichiometric sum of Poling Cp/R coefficients [-, 1/K, ...].
    temperature_k : float
        Temperature [K].
    """
    return delta_h_298_j_mol + cp_enthalpy_integral_j_mol(delta_cp_coefficients, T_REF_K,
                                                           temperature_k)


def ln_k_from_formation(delta_h_298_j_mol: float, delta_s_298_j_mol_k: float,
                        delta_cp_coefficients: Sequence[float], temperature_k: float) -> float:
    """ln K of a gas reaction at temperature T from standard formation data.

    Notes
    -----
    Delta G(T) = Delta H(298) + int Delta Cp dT - T [Delta S(298) + int Delta Cp / T dT],
    ln K = -Delta G(T) / (R T), the integrated van 't Hoff equation with heat
    capacity integration [3]_.  Standard state: ideal gas at 1 bar.

    Parameters
    ----------
    delta_h_298_j_mol : float
        Standard reaction enthalpy at 298.15 K [J/mol].
    delta_s_298_j_mol_k : float
        Standard reaction entropy at 298.15 K [J/(mol K)].
    delta_cp_coefficients : sequence of float
        Stoichiometric sum of Poling Cp/R coefficients [-, 1/K, ...].
    temperature_k : float
        Temperature [K].
    """
    dh = reaction_enthalpy_j_mol(delta_h_298_j_mol, delta_cp_coefficients, temperature_k)
    ds = delta_s_298_j_mol_k + cp_entropy_integral_j_mol_k(delta_cp_coefficients, T_REF_K,
                                                           temperature_k)
    return -(dh - temperature_k * ds) / (R_J_MOL_K * temperature_k)


def dyson_simon_fugacity_coefficients(temperature_k: float, pressure_atm: float) -> dict:
    """Fugacity coefficients of H2, N2 and NH3 in ammonia synthesis gas [-].

    Notes
    -----
    Hydrogen (Shaw and Wones 1964, with the corrected exponent 0.011901):
    ln phi = exp(-3.8402 T^0.125 + 0.541) P - exp(-0.1263 T^0.5 - 15.980) P^2
    + 300 exp(-0.011901 T - 5.941) (exp(-P/300) - 1).
    Nitrogen: phi = 0.93431737 + 0.3101804e-3 T + 0.295896e-3 P - 0.2707279e-6 T^2
    + 0.4775207e-6 P^2.
    Ammonia: phi = 0.1438996 + 0.2028538e-2 T - 0.4487672e-3 P - 0.1142945e-5 T^2
    + 0.2761216e-6 P^2.  T in K, P in atm [2]_.

    Parameters
    ----------
    temperature_k : float
        Temperature [K].
    pressure_atm : float
        Total pressure [atm].
    """
    t, p = temperature_k, pressure_atm
    ln_phi_h2 = (math.exp(-3.8402 * t**0.125 + 0.541) * p
                 - math.exp(-0.1263 * t**0.5 - 15.980) * p**2
                 + 300.0 * math.exp(-0.011901 * t - 5.941) * (math.exp(-p / 300.0) - 1.0))
    return {
        "H2": math.exp(ln_phi_h2),
        "N2": 0.93431737 + 0.3101804e-3 * t + 0.295896e-3 * p - 0.2707279e-6 * t**2
        + 0.4775207e-6 * p**2,
        "NH3": 0.1438996 + 0.2028538e-2 * t - 0.4487672e-3 * p - 0.1142945e-5 * t**2
        + 0.2761216e-6 * p**2,
    }


def equilibrium_extents_kmol_h(inlet_kmol_h: np.ndarray, stoichiometry: np.ndarray,
                               ln_k_pressure: np.ndarray) -> np.ndarray:
    """Equilibrium extents of simultaneous ideal-mixture gas reactions.

    Solves, for every reaction r,

        sum_i nu_ri ln(n_i) - dnu_r ln(n_total) = ln K_r - dnu_r ln(P/P0) - sum_i nu_ri ln phi_i

    for the extents xi (n = n0 + nu^T xi).  The right-hand side is passed in
    whole as ``ln_k_pressure``.

    Parameters
    ----------
    inlet_kmol_h : ndarray, shape (C,)
        Reactor inlet flows [kmol/h].
    stoichiometry : ndarray, shape (R, C)
        Stoichiometric coefficients [-].
    ln_k_pressure : ndarray, shape (R,)
        The right-hand side above [-].

    Returns
    -------
    ndarray, shape (R,)
        Extents [kmol/h].
    """
    n0 = np.asarray(inlet_kmol_h, dtype=float)
    nu = np.atleast_2d(np.asarray(stoichiometry, dtype=float))
    rhs = np.atleast_1d(np.asarray(ln_k_pressure, dtype=float))
    dnu = nu.sum(axis=1)
    scale = n0.sum()
    # Trace amounts keep the logarithms finite for products absent at the inlet;
    # they are far below the balance tolerance of the loop.
    floor = max(1e-13 * scale, 1e-300)

    def residual(xi):
        n = n0 + nu.T @ xi
        return nu @ np.log(np.maximum(n, floor)) - dnu * math.log(n.sum()) - rhs

    if nu.shape[0] == 1:
        return np.array([_single_extent(n0.tolist(), nu[0].tolist(), float(rhs[0]), floor)])

    xi = np.zeros(nu.shape[0])
    for _ in range(200):
        n = np.maximum(n0 + nu.T @ xi, floor)
        f = residual(xi)
        jac = (nu / n) @ nu.T - np.outer(dnu, dnu) / n.sum()
        step = np.linalg.solve(jac, -f)
        t = 1.0
        while np.any(n0 + nu.T @ (xi + t * step) <= 0.0) and t > 1e-12:
            t *= 0.5
        xi = xi + t * step
        if np.max(np.abs(t * step)) < 1e-13 * scale:
            return xi
    raise ArithmeticError("equilibrium extents did not converge in 200 Newton steps")


def ln_fugacity_term(stoichiometry: Mapping[str, float], fugacity: Mapping[str, float]) -> float:
    """sum_i nu_i ln phi_i over the species that have a fugacity coefficient [-]."""
    return sum(nu * math.log(fugacity[c]) for c, nu in stoichiometry.items() if c in fugacity)


def equilibrium_residual(moles_and_coefficients, total_moles: float, dnu: float, rhs: float,
                         floor: float = 1e-300) -> float:
    """sum_i nu_i ln n_i - dnu ln n_total - rhs of one reaction: zero at equilibrium,
    negative short of it [-].

    The condition of :func:`equilibrium_extents_kmol_h` in plain floats, over the
    (n_i, nu_i) of the species that take part; moles below ``floor`` count as
    ``floor`` (a product absent at the inlet).
    """
    s = 0.0
    log = math.log
    for n, v in moles_and_coefficients:
        s += v * log(max(n, floor))
    return s - dnu * log(total_moles) - rhs


def _single_extent(n0: list, row: list, rhs: float, floor: float) -> float:
    """Equilibrium extent of one reaction (the residual above in plain floats) [kmol/h].

    Brent's root on the extent between the limits set by the species that
    run out; at a limit where the residual keeps its sign that limit is the
    answer (the reaction goes as far as it can).
    """
    active = [(n, v) for n, v in zip(n0, row, strict=True) if v != 0.0]
    total0, dnu = sum(n0), sum(row)

    def residual(x: float) -> float:
        return equilibrium_residual([(n + v * x, v) for n, v in active], total0 + dnu * x,
                                    dnu, rhs, floor)

    hi = min((n / -v for n, v in active if v < 0), default=math.inf)
    lo = -min((n / v for n, v in active if v > 0), default=math.inf)
    span = hi - lo
    a, b = lo + 1e-12 * span, hi - 1e-12 * span
    fa, fb = residual(a), residual(b)
    if fa * fb > 0:
        return b if fa < 0 else a
    from scipy.optimize import brentq  # here, so that reading a case does not import SciPy

    return brentq(residual, a, b, xtol=max(1e-14 * total0, 1e-300), rtol=1e-14, maxiter=200)
