"""Compressibility of a gas mixture by the Peng-Robinson equation of state.

Notes
-----
Peng and Robinson, "A New Two-Constant Equation of State", *Ind. Eng. Chem.
Fundam.* 15 (1976) 59-64:

    P = R T / (v - b) - a alpha(T) / (v^2 + 2 b v - b^2),

with a_i = 0.45724 R^2 Tc^2 / Pc, b_i = 0.07780 R Tc / Pc (eqs 9 and 10; the
exact roots of the critical conditions are used here, as in the ``thermo``
library), alpha_i = [1 + kappa_i (1 - sqrt(T/Tc))]^2 and kappa_i = 0.37464 +
1.54226 omega_i - 0.26992 omega_i^2 (eqs 17 and 18).  Mixtures follow the
van der Waals one-fluid rules (eqs 19 and 20): (a alpha)_m = sum_ij y_i y_j
(1 - k_ij) sqrt((a alpha)_i (a alpha)_j) and b_m = sum_i y_i b_i.  In terms
of A = (a alpha)_m P / (R T)^2 and B = b_m P / (R T) the compressibility Z =
P v / (R T) solves (eq. 5)

    Z^3 - (1 - B) Z^2 + (A - 3 B^2 - 2 B) Z - (A B - B^2 - B^3) = 0,

and the gas takes the largest real root (equation numbers from memory).
Critical constants, acentric factors and k_ij come from
:func:`purgeplan.properties.peng_robinson_parameters`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from .thermo import R_J_MOL_K

#: Omega_a and Omega_b of the Peng-Robinson equation: the exact roots of its critical
#: conditions (0.45724 and 0.07780 to the five places of Peng and Robinson, 1976).
OMEGA_A = 0.4572355289213821
OMEGA_B = 0.07779607390388844


@dataclass(frozen=True)
class PengRobinsonData:
    """Peng-Robinson parameters of the components of a loop, in the loop's component order.

    Attributes
    ----------
    components : tuple of str
    critical_temperature_k : tuple of float
    critical_pressure_pa : tuple of float
    acentric_factor : tuple of float
    interaction : tuple of tuple of float
        Binary interaction parameters k_ij, symmetric, zero on the diagonal [-].
    """

    components: tuple[str, ...]
    critical_temperature_k: tuple[float, ...]
    critical_pressure_pa: tuple[float, ...]
    acentric_factor: tuple[float, ...]
    interaction: tuple[tuple[float, ...], ...]


def peng_robinson_compressibility(data: PengRobinsonData, mole_fractions: Sequence[float],
                                  temperature_k: float, pressure_bar: float) -> float:
    """Compressibility factor Z of a gas mixture by the Peng-Robinson equation [-].

    Parameters
    ----------
    data : PengRobinsonData
    mole_fractions : sequence of float
        In the order of ``data.components``; normalised here [-].
    temperature_k : float
        Temperature [K].
    pressure_bar : float
        Absolute pressure [bar].
    """
    total = sum(mole_fractions)
    y = [v / total for v in mole_fractions]
    t = temperature_k
    root_a, b_mix = [], 0.0
    for tc, pc, omega, yi in zip(data.critical_temperature_k, data.critical_pressure_pa,
                                 data.acentric_factor, y, strict=True):
        kappa = 0.37464 + 1.54226 * omega - 0.26992 * omega**2
        root_a.append(math.sqrt(OMEGA_A / pc) * R_J_MOL_K * tc
                      * (1.0 + kappa * (1.0 - math.sqrt(t / tc))))
        b_mix += yi * OMEGA_B * R_J_MOL_K * tc / pc
    a_mix = sum(yi * yj * (1.0 - kij) * ai * aj
                for yi, ai, row in zip(y, root_a, data.interaction, strict=True) if yi
                for yj, aj, kij in zip(y, root_a, row, strict=True) if yj)
    rt = R_J_MOL_K * t
    p = pressure_bar * 1e5
    a_dim, b_dim = a_mix * p / rt**2, b_mix * p / rt
    return largest_real_root(-(1.0 - b_dim), a_dim - 3.0 * b_dim**2 - 2.0 * b_dim,
                             -(a_dim * b_dim - b_dim**2 - b_dim**3))


def largest_real_root(c2: float, c1: float, c0: float) -> float:
    """Largest real root of z^3 + c2 z^2 + c1 z + c0 = 0.

    Closed form of *Numerical Recipes*, 3rd ed. (Press et al., Cambridge
    2007), section 5.6 (trigonometric form for three real roots, else
    Cardano's), with one Newton step to polish the root.
    """
    q = (c2 * c2 - 3.0 * c1) / 9.0
    r = (2.0 * c2**3 - 9.0 * c2 * c1 + 27.0 * c0) / 54.0
    if r * r < q**3:
        theta = math.acos(r / math.sqrt(q**3))
        z = max(-2.0 * math.sqrt(q) * math.cos((theta + k * 2.0 * math.pi) / 3.0)
                for k in (-1, 0, 1)) - c2 / 3.0
    else:
        big = -math.copysign((abs(r) + math.sqrt(r * r - q**3)) ** (1.0 / 3.0), r)
        z = big + (q / big if big != 0.0 else 0.0) - c2 / 3.0
    slope = (3.0 * z + 2.0 * c2) * z + c1
    if slope != 0.0:
        z -= (((z + c2) * z + c1) * z + c0) / slope
    return z
