"""Ideal-gas heat capacity, its integrals, and the heat-capacity ratio.

Heat capacities use the polynomial form of Poling, Prausnitz and O'Connell,
*The Properties of Gases and Liquids*, 5th ed., McGraw-Hill 2001, Appendix A,
section C: Cp/R = a0 + a1 T + a2 T^2 + a3 T^3 + a4 T^4 (T in K).  The
coefficients come from the ``chemicals`` library, which carries that table.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

#: Molar gas constant [J/(mol K)] (CODATA 2018, exact by SI definition).
R_J_MOL_K = 8.314462618
#: Zero of the Celsius scale [K].
KELVIN = 273.15

#: Standard reference temperature [K].
T_REF_K = 298.15


def cp_ideal_gas_j_mol_k(coefficients: Sequence[float], temperature_k: float) -> float:
    """Ideal-gas isobaric heat capacity.

    Parameters
    ----------
    coefficients : sequence of float
        Poling a0..a4 for Cp/R = a0 + a1 T + a2 T^2 + a3 T^3 + a4 T^4 [-, 1/K, ...].
    temperature_k : float
        Temperature [K].

    Returns
    -------
    float
        Cp [J/(mol K)].
    """
    t = temperature_k
    return R_J_MOL_K * sum(a * t**i for i, a in enumerate(coefficients))


def cp_enthalpy_integral_j_mol(coefficients: Sequence[float], t1_k: float, t2_k: float) -> float:
    """Integral of Cp dT from t1 to t2 [J/mol] for the Poling polynomial."""
    return R_J_MOL_K * sum(a * (t2_k ** (i + 1) - t1_k ** (i + 1)) / (i + 1)
                           for i, a in enumerate(coefficients))


def cp_entropy_integral_j_mol_k(coefficients: Sequence[float], t1_k: float, t2_k: float) -> float:
    """Integral of Cp/T dT from t1 to t2 [J/(mol K)] for the Poling polynomial."""
    total = coefficients[0] * math.log(t2_k / t1_k)
    total += sum(a * (t2_k**i - t1_k**i) / i for i, a in enumerate(coefficients) if i > 0)
    return R_J_MOL_K * total


def heat_capacity_ratio(cp_mixture_j_mol_k: float) -> float:
    """Ideal-gas heat-capacity ratio gamma = Cp / (Cp - R) [-].

    Parameters
    ----------
    cp_mixture_j_mol_k : float
        Mole-fraction-weighted mixture Cp [J/(mol K)].
    """
    return cp_mixture_j_mol_k / (cp_mixture_j_mol_k - R_J_MOL_K)


def dippr_106_j_mol(temperature_k: float, tc_k: float, c1: float, c2: float, c3: float,
                    c4: float) -> float:
    """Enthalpy of vaporisation by the DIPPR equation 106 [J/mol].

    Hvap = C1 (1 - Tr)^(C2 + C3 Tr + C4 Tr^2), Tr = T / Tc, with the
    coefficients of Perry's *Chemical Engineers' Handbook*, 8th ed. (Green and
    Perry, McGraw-Hill 2008), Table 2-150, as carried by the ``chemicals``
    library.  Zero at and above the critical temperature, where there is no
    liquid to vaporise.
    """
    tr = temperature_k / tc_k
    if tr >= 1.0:
        return 0.0
    return c1 * (1.0 - tr) ** (c2 + c3 * tr + c4 * tr * tr)
