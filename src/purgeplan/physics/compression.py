"""Ideal-gas isentropic compression work.

Notes
-----
Work per mole for one adiabatic reversible stage from P1 to P2,

    W = gamma / (gamma - 1) R T1 [(P2/P1)^((gamma - 1)/gamma) - 1],

and for N stages with equal pressure ratios (P2/P1)^(1/N) and intercooling
back to T1, N times the work of one such stage (*Hydrogen Generation,
Storage and Utilization*, eqs 5.16 to 5.18; Zhang et al., Wiley 2014, authors
and year from memory).  Shaft power is the isentropic power divided by the isentropic
efficiency.
"""

from __future__ import annotations

from .thermo import R_J_MOL_K


def isentropic_work_kj_kmol(inlet_temperature_k: float, pressure_ratio: float,
                            heat_capacity_ratio: float, stages: int = 1) -> float:
    """Isentropic work of an intercooled compressor with equal stage ratios.

    Parameters
    ----------
    inlet_temperature_k : float
        Gas temperature at the inlet of every stage [K].
    pressure_ratio : float
        Overall discharge over suction pressure [-]; at least 1.
    heat_capacity_ratio : float
        Ideal-gas gamma = Cp/Cv of the gas [-].
    stages : int
        Number of stages, intercooled to the inlet temperature [-].

    Returns
    -------
    float
        Isentropic work per kmol of gas [kJ/kmol] (numerically J/mol).
    """
    if pressure_ratio < 1.0:
        raise ValueError(f"pressure ratio {pressure_ratio} is below 1")
    g = heat_capacity_ratio
    exponent = (g - 1.0) / g
    per_stage = g / (g - 1.0) * R_J_MOL_K * inlet_temperature_k * (
        pressure_ratio ** (exponent / stages) - 1.0)
    return stages * per_stage


def shaft_power_kw(flow_kmol_h: float, work_kj_kmol: float, efficiency: float) -> float:
    """Shaft power [kW] from a molar flow [kmol/h], isentropic work [kJ/kmol] and efficiency [-]."""
    return flow_kmol_h * work_kj_kmol / 3600.0 / efficiency
