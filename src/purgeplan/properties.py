"""Component property data from the ``chemicals`` library, with case overrides.

Data sources (through ``chemicals``): molar masses from IUPAC atomic weights;
ideal-gas formation enthalpies and absolute entropies from the ATcT, CRC and
API TDB tables; ideal-gas heat capacity coefficients from Poling et al., *The
Properties of Gases and Liquids*, 5th ed., Appendix A; vapour pressures by the
Wagner equation (Poling et al.; McGarry 1983); lower heating values from the
combustion stoichiometry and formation enthalpies (``combustion_data``);
enthalpies of vaporisation by the DIPPR equation 106 with the coefficients of
Perry's *Chemical Engineers' Handbook*, 8th ed., Table 2-150.

Reading those tables costs about a second, so the record looked up for each
identifier is kept in a per-user cache file, one per ``chemicals`` version
(``purgeplan/properties-chemicals-VERSION.json`` in ``$XDG_CACHE_HOME``, else
the platform's user cache folder).  An identifier missing from the file is
looked up in ``chemicals`` and added; a file that cannot be read, or that was
written for another version or format, is ignored and rewritten; a cache
folder that cannot be written only costs the lookup.  Identifiers that
``chemicals`` does not know are never cached.  The Peng-Robinson parameters of
a set of components (:func:`peng_robinson_parameters`, from ``thermo``) are
kept the same way, in ``purgeplan/peng-robinson-thermo-VERSION.json``.
"""

from __future__ import annotations

import json
import math
import os
import sys
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

from .errors import CaseError
from .physics import thermo
from .physics.separation import wagner_original_pa, wagner_pa

#: Version of the cache file layout; a file of another version is ignored.
CACHE_FORMAT = 2


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
    vaporisation_enthalpy_coefficients : tuple or None
        ("dippr_106", Tc, C1, C2, C3, C4) [K, J/mol, -] (Perry's Table 2-150).
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
    vaporisation_enthalpy_coefficients: tuple | None = None

    def vapour_pressure_bar(self, temperature_k: float) -> float:
        """Vapour pressure by the Wagner equation [bar]."""
        if self.vapour_pressure_coefficients is None:
            raise CaseError(f"separator.liquid_fraction.{self.name}",
                            f"no vapour pressure data for '{self.name}', so it cannot condense: "
                            "give a split fraction, or an identifier the property library knows")
        kind, *coeffs = self.vapour_pressure_coefficients
        form = wagner_pa if kind == "wagner" else wagner_original_pa
        return form(temperature_k, *coeffs) / 1e5

    def vaporisation_enthalpy_j_mol(self, temperature_k: float) -> float | None:
        """Enthalpy of vaporisation by DIPPR equation 106 [J/mol]; None without data."""
        if self.vaporisation_enthalpy_coefficients is None:
            return None
        _, tc, *c = self.vaporisation_enthalpy_coefficients
        return thermo.dippr_106_j_mol(temperature_k, tc, *c)


@lru_cache(maxsize=256)
def lookup(identifier: str) -> tuple:
    """Raw property record for a name, formula or CAS number from ``chemicals``.

    Returns a tuple (cas, formula, atoms, mw, lhv_kj_mol, hf_kj_mol, s0, cp, psat, hvap),
    from the per-user cache when it holds the identifier for the installed
    ``chemicals`` version.  Raises LookupError when ``chemicals`` does not know
    the identifier.
    """
    cache = _DiskCache.instance()
    record = cache.get(identifier)
    if record is None:
        record = lookup_uncached(identifier)
        cache.put(identifier, record)
    return record


def lookup_uncached(identifier: str) -> tuple:
    """:func:`lookup` straight from the ``chemicals`` tables, bypassing every cache."""
    import chemicals
    from chemicals import combustion, heat_capacity, identifiers, phase_change
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
    hvap = None
    if cas in phase_change.phase_change_data_Perrys2_150.index:
        r = phase_change.phase_change_data_Perrys2_150.loc[cas]
        hvap = ("dippr_106", *(float(r[k]) for k in ("Tc", "C1", "C2", "C3", "C4")))
    return (cas, formula, atoms, float(chemicals.MW(cas)), float(lhv),
            None if hf is None else float(hf) / 1000.0, None if s0 is None else float(s0),
            cp, psat, hvap)


# ---------------------------------------------------------------------------
# per-user cache of looked-up records


def cache_folder() -> Path:
    """The per-user cache folder of purgeplan."""
    base = os.environ.get("XDG_CACHE_HOME")
    if not base:
        if sys.platform == "win32":
            base = os.environ.get("LOCALAPPDATA") or str(Path.home() / "AppData" / "Local")
        elif sys.platform == "darwin":
            base = str(Path.home() / "Library" / "Caches")
        else:
            base = str(Path.home() / ".cache")
    return Path(base) / "purgeplan"


def _library_version(name: str) -> str | None:
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version(name)
    except PackageNotFoundError:
        return None


def _decode(raw: object) -> tuple:
    """A record read back from JSON, exactly as :func:`lookup_uncached` returns it.

    Raises ValueError (or TypeError) for anything that is not such a record.
    """
    cas, formula, atoms, mw, lhv, hf, s0, cp, psat, hvap = raw
    if not (isinstance(cas, str) and isinstance(formula, str)):
        raise ValueError("cas, formula")
    atoms = tuple((str(e), int(n)) for e, n in atoms)
    numbers = (mw, lhv) + tuple(x for x in (hf, s0) if x is not None)
    if not all(isinstance(x, float) for x in numbers):
        raise ValueError("numbers")
    if cp is not None:
        cp = tuple(cp)
        if len(cp) != 5 or not all(isinstance(x, float) for x in cp):
            raise ValueError("cp")
    if psat is not None:
        kind, *coeffs = psat
        if kind not in ("wagner", "wagner_original") or len(coeffs) != 6 or not all(
                isinstance(x, float) for x in coeffs):
            raise ValueError("psat")
        psat = (kind, *coeffs)
    if hvap is not None:
        kind, *coeffs = hvap
        if kind != "dippr_106" or len(coeffs) != 5 or not all(
                isinstance(x, float) for x in coeffs):
            raise ValueError("hvap")
        hvap = (kind, *coeffs)
    return (cas, formula, atoms, mw, lhv, hf, s0, cp, psat, hvap)


class _DiskCache:
    """The cache file of the installed ``chemicals`` version, read once per process."""

    _instance: _DiskCache | None = None
    #: The library the records come from, and the file name before its version.
    LIBRARY = "chemicals"
    PREFIX = "properties-chemicals"
    decode = staticmethod(_decode)

    def __init__(self, folder: Path, version: str | None):
        self.version = version
        self.path = None if version is None else folder / f"{self.PREFIX}-{version}.json"
        self.records: dict[str, tuple] = {}
        if self.path is not None:
            self.records = self._read()

    @classmethod
    def instance(cls) -> _DiskCache:
        if cls._instance is None:
            cls._instance = cls(cache_folder(), _library_version(cls.LIBRARY))
        return cls._instance

    @classmethod
    def reset(cls) -> None:
        """Forget the file read in this process (and :func:`lookup`'s memory of it)."""
        cls._instance = None
        lookup.cache_clear()

    def _read(self) -> dict[str, tuple]:
        try:
            with open(self.path, encoding="utf-8") as f:
                doc = json.load(f)
            if (doc.get("format") != CACHE_FORMAT or doc.get(self.LIBRARY) != self.version
                    or not isinstance(doc.get("records"), dict)):
                return {}
            return {str(k): self.decode(v) for k, v in doc["records"].items()}
        except (OSError, ValueError, TypeError, AttributeError):
            return {}  # absent, unreadable, corrupt or foreign: rebuilt on the next put

    def get(self, identifier: str) -> tuple | None:
        return self.records.get(identifier)

    def put(self, identifier: str, record: tuple) -> None:
        if self.path is None:
            return
        # keep what other processes (a study's workers, another case) added meanwhile
        self.records = {**self._read(), **self.records, identifier: record}
        doc = {"format": CACHE_FORMAT, self.LIBRARY: self.version, "records": self.records}
        import tempfile

        tmp = None
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(dir=self.path.parent, prefix=self.path.name + ".",
                                       suffix=".tmp")
            with os.fdopen(fd, "w", encoding="utf-8") as f:
                json.dump(doc, f)
            os.replace(tmp, self.path)
            tmp = None
        except (OSError, TypeError, ValueError):
            pass  # the cache is an optimisation: the record is still returned
        finally:
            if tmp is not None:
                try:
                    os.unlink(tmp)
                except OSError:
                    pass


# ---------------------------------------------------------------------------
# Peng-Robinson parameters from the ``thermo`` library


@lru_cache(maxsize=64)
def peng_robinson_parameters(cas_numbers: tuple[str, ...]) -> tuple:
    """Critical constants, acentric factors and k_ij of a set of components.

    Returns (Tc [K], Pc [Pa], omega [-], k_ij [-]) in the order given, from
    the per-user cache when it holds the set for the installed ``thermo``
    version.  Tc, Pc and omega are the values the ``chemicals`` library
    returns by default (its critical-constant and acentric-factor tables); k_ij are the
    Peng-Robinson parameters of the ChemSep database that ``thermo`` carries,
    zero for a pair it has none for (common practice).  Raises LookupError
    naming the first CAS number without critical constants.
    """
    cache = _EosCache.instance()
    key = " ".join(cas_numbers)
    record = cache.get(key)
    if record is None:
        record = peng_robinson_parameters_uncached(cas_numbers)
        cache.put(key, record)
    return record


def peng_robinson_parameters_uncached(cas_numbers: tuple[str, ...]) -> tuple:
    """:func:`peng_robinson_parameters` straight from ``thermo``, bypassing every cache."""
    from chemicals import Pc, Tc, omega
    from thermo.interaction_parameters import IPDB

    constants = []
    for cas in cas_numbers:
        values = (Tc(cas), Pc(cas), omega(cas)) if cas else (None,)
        if any(v is None or not math.isfinite(v) for v in values):
            raise LookupError(cas)
        constants.append(tuple(float(v) for v in values))
    kij = IPDB.get_ip_symmetric_matrix("ChemSep PR", list(cas_numbers), "kij")
    tc, pc, om = (tuple(c[k] for c in constants) for k in range(3))
    return tc, pc, om, tuple(tuple(float(k) for k in row) for row in kij)


def _decode_eos(raw: object) -> tuple:
    """A Peng-Robinson record read back from JSON, as :func:`peng_robinson_parameters_uncached`
    returns it; ValueError (or TypeError) for anything else."""
    tc, pc, om, kij = raw
    rows = (tc, pc, om, *kij)
    if len(kij) != len(tc) or any(len(r) != len(tc) for r in rows):
        raise ValueError("lengths")
    if not all(isinstance(x, float) for r in rows for x in r):
        raise ValueError("numbers")
    return tuple(tc), tuple(pc), tuple(om), tuple(tuple(r) for r in kij)


class _EosCache(_DiskCache):
    """The cache file of Peng-Robinson parameters of the installed ``thermo`` version."""

    _instance: _EosCache | None = None
    LIBRARY = "thermo"
    PREFIX = "peng-robinson-thermo"
    decode = staticmethod(_decode_eos)

    @classmethod
    def reset(cls) -> None:
        cls._instance = None
        peng_robinson_parameters.cache_clear()


# ---------------------------------------------------------------------------
# UNIFAC groups from the ``thermo`` library


@lru_cache(maxsize=256)
def unifac_groups(cas: str) -> tuple[tuple[int, int], ...] | None:
    """The original-UNIFAC subgroups of a component, as (subgroup, count) pairs.

    The group assignment of the Dortmund Data Bank that ``thermo`` carries
    (``thermo.unifac.DDBST_UNIFAC_assignments``, keyed by InChIKey, the key
    from ``chemicals``); None for a component it has none for (as ammonia,
    hydrogen and the other light gases, which original UNIFAC does not cover).
    """
    if not cas:
        return None
    import thermo.unifac
    from chemicals.identifiers import search_chemical

    try:
        key = search_chemical(cas).InChI_key
    except Exception:  # chemicals raises plain Exception for unknown names
        return None
    thermo.unifac.load_group_assignments_DDBST()
    groups = thermo.unifac.DDBST_UNIFAC_assignments.get(key)
    return None if not groups else tuple(sorted((int(g), int(n)) for g, n in groups.items()))
