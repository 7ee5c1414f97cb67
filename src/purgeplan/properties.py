"""Component property data from the ``chemicals`` library, with case overrides.

Data sources (through ``chemicals``): molar masses from IUPAC atomic weights;
ideal-gas formation enthalpies and absolute entropies from the ATcT, CRC and
API TDB tables; ideal-gas heat capacity coefficients from Poling et al., *The
Properties of Gases and Liquids*, 5th ed., Appendix A; vapour pressures by the
Wagner equation (Poling et al.; McGarry 1983); lower heating values from the
combustion stoichiometry and formation enthalpies (``combustion_data``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

from .errors import CaseError


@dataclass(frozen=True)
class ComponentData:
    """Properties of one component, all in the units named.

    Attributes
    ----------
    name : str
        The label used in the case file.
    cas : str
        CAS registry number, or "" for a component defined only by overrides.
    formula : str
        Hill or common formula, "" if unknown.
    atoms : tuple of (str, int)
        Element counts.
    molar_mass_kg_kmol : float
    lhv_kj_mol : float
        Lower heating value, positive for a fuel, zero for a non-combustible [kJ/mol].
    formation_enthalpy_kj_mol : float or None
        Ideal gas, 298.15 K [kJ/mol].
    standard_entropy_j_mol_k : float or None
        Absolute ideal-gas entropy at 298.15 K and 1 bar [J/(mol K)].
    cp_coefficients : tuple of float or None
        Poling Cp/R polynomial a0..a4, or a constant Cp/R as a one-tuple.
    vapour_pressure_coefficients : tuple or None
        ("wagner", Tc, Pc, a, b, c, d) or ("wagner_original", ...) [K, Pa, -].
    """

    name: str
    cas: str
    formula: str
    atoms: tuple
    molar_mass_kg_kmol: float
    lhv_kj_mol: float
    formation_enthalpy_kj_mol: float | None
    standard_entropy_j_mol_k: float | None
    cp_coefficients: tuple | None
    vapour_pressure_coefficients: tuple | None

    def vapour_pressure_bar(self, temperature_k: float) -> float:
        """Vapour pressure by the Wagner equation [bar]."""
        from chemicals import vapor_pressure as vp

        if self.vapour_pressure_coefficients is None:
            raise CaseError(f"separator.liquid_fraction.{self.name}",
                            f"no vapour pressure data for '{self.name}', so it cannot condense: "
                            "give a split fraction, or an identifier the property library knows")
        kind, *coeffs = self.vapour_pressure_coefficients
        form = vp.Wagner if kind == "wagner" else vp.Wagner_original
        return form(temperature_k, *coeffs) / 1e5


@lru_cache(maxsize=256)
def lookup(identifier: str) -> tuple:
    """Raw property record for a name, formula or CAS number from ``chemicals``.

    Returns a tuple (cas, formula, atoms, mw, lhv_kj_mol, hf_kj_mol, s0, cp, psat).
    Raises LookupError when ``chemicals`` does not know the identifier.
    """
    import chemicals
    from chemicals import combustion, heat_capacity, identifiers
    from chemicals import vapor_pressure as vp

    try:
        meta = identifiers.search_chemical(identifier)
    except Exception as exc:  # chemicals raises plain Exception for unknown names
        raise LookupError(identifier) from exc
    cas = meta.CASs
    formula = meta.formula
    atoms = tuple(sorted(chemicals.simple_formula_parser(formula).items()))
    hf = chemicals.Hfg(cas)
    s0 = chemicals.S0g(cas)
    lhv = 0.0
    try:
        data = combustion.combustion_data(formula, Hf=hf)
        lhv = -data.LHV / 1000.0 if data.LHV is not None else 0.0
    except Exception:
        lhv = 0.0
    if not math.isfinite(lhv) or lhv < 0.0:
        lhv = 0.0
    cp = None
    table = heat_capacity.Cp_data_Poling
    if cas in table.index:
        row = table.loc[cas]
        coeffs = tuple(float(row[k]) for k in ("a0", "a1", "a2", "a3", "a4"))
        if all(math.isfinite(c) for c in coeffs):
            cp = coeffs
    vp.load_vapor_pressure_dfs()
    psat = None
    if cas in vp.Psat_data_WagnerPoling.index:
        r = vp.Psat_data_WagnerPoling.loc[cas]
        psat = ("wagner", float(r.Tc), float(r.Pc), float(r.A), float(r.B), float(r.C),
                float(r.D))
    elif cas in vp.Psat_data_WagnerMcGarry.index:
        r = vp.Psat_data_WagnerMcGarry.loc[cas]
        psat = ("wagner_original", float(r.Tc), float(r.Pc), float(r.A), float(r.B),
                float(r.C), float(r.D))
    return (cas, formula, atoms, float(chemicals.MW(cas)), lhv,
            None if hf is None else hf / 1000.0, s0, cp, psat)
