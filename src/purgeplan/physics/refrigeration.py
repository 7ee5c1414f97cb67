"""Refrigeration: the coefficient of performance of a vapour-compression cycle.

Notes
-----
A Carnot refrigerator taking heat in at the evaporator temperature T_C and
rejecting it at the condenser temperature T_H has the coefficient of
performance omega = T_C / (T_H - T_C) (Smith, Van Ness and Abbott,
*Introduction to Chemical Engineering Thermodynamics*, 7th ed., McGraw-Hill
2005, eq. 9.3; equation number from memory).  A real cycle reaches a fraction
of it, about 0.5 to 0.6 for ammonia refrigeration (common practice).  The
shaft power is the duty over the coefficient of performance, and the
condenser rejects duty plus power.
"""

from __future__ import annotations


def carnot_cop(evaporator_k: float, condenser_k: float) -> float:
    """Carnot coefficient of performance T_C / (T_H - T_C) [-].

    Parameters
    ----------
    evaporator_k : float
        Evaporating refrigerant temperature T_C [K]; above 0.
    condenser_k : float
        Condensing refrigerant temperature T_H [K]; above T_C.
    """
    if not 0.0 < evaporator_k < condenser_k:
        raise ValueError(f"evaporator at {evaporator_k:.6g} K must lie between 0 K and the "
                         f"condenser's {condenser_k:.6g} K")
    return evaporator_k / (condenser_k - evaporator_k)
