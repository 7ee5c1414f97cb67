"""Isentropic compression work, of an ideal gas or of a real gas by its compressibility.

Notes
-----
Work per mole for one adiabatic reversible stage of an ideal gas from P1 to P2,

    W = gamma / (gamma - 1) R T1 [(P2/P1)^((gamma - 1)/gamma) - 1],

and for N stages with equal pressure ratios (P2/P1)^(1/N) and intercooling
back to T1, N times the work of one such stage (*Hydrogen Generation,
Storage and Utilization*, eqs 5.16 to 5.18; Zhang et al., Wiley 2014, authors
and year from memory).  Shaft power is the isentropic power divided by the isentropic
efficiency.

A real gas: each stage's ideal-gas work times the mean of the compressibility
at its suction (T1, P_in) and at its isentropic discharge (T1
(P_out/P_in)^((gamma - 1)/gamma), P_out): the head equations of the *GPSA
Engineering Data Book* (Gas Processors Suppliers Association), section 13,
Compressors, with Z_avg = (Z_suction + Z_discharge) / 2 (seen in secondary
sources that cite that section; edition and equation numbers not seen).  The
exponent keeps the ideal-gas gamma.
"""

from __future__ import annotations

from collections.abc import Callable

from .thermo import R_J_MOL_K

#: Compressibility Z(temperature [K], pressure [bar]) of the gas compressed [-].
Compressibility = Callable[[float, float], float]


def isentropic_work_kj_kmol(inlet_temperature_k: float, pressure_ratio: float,
                            heat_capacity_ratio: float, stages: int = 1,
                            suction_pressure_bar: float | None = None,
                            compressibility: Compressibility | None = None) -> float:
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
    suction_pressure_bar : float, optional
        Pressure at the first stage's inlet [bar abs]; needed with ``compressibility``.
    compressibility : callable, optional
        Z(T [K], P [bar]) of the gas; None for an ideal gas (Z = 1).

    Returns
    -------
    float
        Isentropic work per kmol of gas [kJ/kmol] (numerically J/mol).
    """
    if pressure_ratio < 1.0:
        raise ValueError(f"pressure ratio {pressure_ratio} is below 1")
    g = heat_capacity_ratio
    exponent = (g - 1.0) / g
    t_rise = pressure_ratio ** (exponent / stages)
    per_stage = g / (g - 1.0) * R_J_MOL_K * inlet_temperature_k * (t_rise - 1.0)
    if compressibility is None:
        return stages * per_stage
    r = pressure_ratio ** (1.0 / stages)
    t_in, t_out = inlet_temperature_k, inlet_temperature_k * t_rise
    suction = [suction_pressure_bar * r**k for k in range(stages)]
    z_mean = sum(compressibility(t_in, p) + compressibility(t_out, p * r)
                 for p in suction) / (2.0 * stages)
    return stages * per_stage * z_mean


def shaft_power_kw(flow_kmol_h: float, work_kj_kmol: float, efficiency: float) -> float:
    """Shaft power [kW] from a molar flow [kmol/h], isentropic work [kJ/kmol] and efficiency [-]."""
    return flow_kmol_h * work_kj_kmol / 3600.0 / efficiency


def joining_stage(supply_pressure_bar: float, discharge_pressure_bar: float, stages: int,
                  return_pressure_bar: float) -> int:
    """The stage of a multistage compressor a side stream at its pressure joins [-].

    Stages have equal pressure ratios r = (P_discharge / P_supply)^(1/N), so
    stage k (0 for the first) takes suction at P_supply r^k.  The stream joins
    the last stage whose suction is at or below its pressure (common
    practice: a side stream enters at the suction that suits it; any
    pressure above that suction is let down across the inlet valve).
    """
    if return_pressure_bar < supply_pressure_bar:
        raise ValueError(f"return pressure {return_pressure_bar:.4g} bar is below the "
                         f"compressor suction {supply_pressure_bar:.4g} bar")
    r = (discharge_pressure_bar / supply_pressure_bar) ** (1.0 / stages)
    k = 0
    reach = return_pressure_bar * (1.0 + 1e-12)
    while k + 1 < stages and supply_pressure_bar * r ** (k + 1) <= reach:
        k += 1
    return k


def side_stream_work_kj_kmol(inlet_temperature_k: float, supply_pressure_bar: float,
                             discharge_pressure_bar: float, stages: int,
                             return_pressure_bar: float, heat_capacity_ratio: float,
                             compressibility: Compressibility | None = None) -> float:
    """Isentropic work per kmol of a side stream compressed in the stages from where it joins.

    The stream joins at :func:`joining_stage` k and passes the remaining
    N - k intercooled stages, each of ratio (P_discharge / P_supply)^(1/N)
    [kJ/kmol].  At a return pressure at or above the last stage's suction it
    passes that stage only.  ``compressibility`` as for
    :func:`isentropic_work_kj_kmol`.
    """
    if return_pressure_bar >= discharge_pressure_bar:
        return 0.0
    k = joining_stage(supply_pressure_bar, discharge_pressure_bar, stages, return_pressure_bar)
    r = (discharge_pressure_bar / supply_pressure_bar) ** (1.0 / stages)
    left = stages - k
    return isentropic_work_kj_kmol(inlet_temperature_k, r ** left, heat_capacity_ratio, left,
                                   discharge_pressure_bar / r ** left, compressibility)


def pump_work_kj_kmol(molar_mass_kg_kmol: float, density_kg_m3: float,
                      pressure_rise_bar: float) -> float:
    """Reversible work of pumping an incompressible liquid, W = v dP [kJ/kmol].

    v = M / rho [m3/kmol] and dP in kPa (100 kPa per bar); shaft power is this
    divided by the pump efficiency (common practice: the reversible work of
    a liquid of constant density).
    """
    return molar_mass_kg_kmol / density_kg_m3 * max(pressure_rise_bar, 0.0) * 100.0
