"""Carbon dioxide from burning or flaring gas, by the carbon balance.

Complete combustion turns every carbon atom of the burned gas into one CO2
molecule (the carbon balance; flaring is taken as complete combustion too,
common practice for an inventory estimate).

References
----------
Molar mass of CO2 from the IUPAC standard atomic weights, C 12.011 and
O 15.999 (conventional values; from memory), 44.009 kg/kmol.
"""

from __future__ import annotations

#: Molar mass of carbon dioxide [kg/kmol] (IUPAC conventional atomic weights).
CO2_MOLAR_MASS_KG_KMOL = 12.011 + 2 * 15.999


def co2_t_per_kmol(carbon_atoms: float) -> float:
    """CO2 from burning one kmol of a gas with ``carbon_atoms`` C per molecule [t/kmol]."""
    return carbon_atoms * CO2_MOLAR_MASS_KG_KMOL / 1000.0


def co2_t_per_tj_lhv(carbon_atoms: float, lhv_kj_mol: float) -> float:
    """CO2 per TJ of lower heating value of a pure fuel [t/TJ].

    ``lhv_kj_mol`` is the lower heating value [kJ/mol = MJ/kmol]; one TJ is
    1e6 MJ, that is 1e6 / lhv kmol of fuel.
    """
    return co2_t_per_kmol(carbon_atoms) * 1.0e6 / lhv_kj_mol
