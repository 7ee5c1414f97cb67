"""The loop as plain data: what the equations, the model and the costs are built over.

Built from a validated case by :func:`purgeplan.build.build_loop`.  Every
record here is frozen and picklable, so one loop can be sent to a worker
process or a cluster as it is.

Streams (kmol/h per component): ``makeup`` (fresh make-up gas bought),
``direct_feed`` (feeds that enter the reactor directly, if any),
``reactor_feed`` = makeup + direct_feed + recycle (+ ``recovery_return``),
``reactor_outlet``, ``liquid_product``, ``separator_vapour``, ``purge`` = a
separator_vapour, ``recycle`` = (1 - a) separator_vapour, and with a recovery
unit ``recovery_return`` (back to the reactor feed, recompressed from its
return pressure) and ``recovery_tail_gas``, and ``recovery_export`` for
recovered gas that leaves the loop sold; with a let-down of the liquid,
``letdown_gas`` (dissolved gas released) and ``letdown_liquid`` (the product
as delivered).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .physics.real_gas import PengRobinsonData
from .physics.thermo import KELVIN
from .properties import ComponentData

__all__ = ["KELVIN", "Capital", "Cooling", "InletRatio", "Loop", "Prices", "Reaction", "Source"]


@dataclass(frozen=True)
class Reaction:
    """One reaction with its per-pass model.

    ``per_pass`` is "fixed", "equilibrium", "sized" (a first-order sizing
    relation) or "rate" (a catalyst bed integrated over the rate expression
    ``rate``: its law, Temkin-Pyzhev, power law or Langmuir-Hinshelwood, and
    the constants the case gives, see :func:`purgeplan.coefficients.rate_function`);
    the last two make the conversion a design variable.  An
    equilibrium reaction with a ``rate`` sizes its catalyst from the rate at
    its approach to equilibrium.  A ``rate`` with ``bed_inlet_temperatures_c``
    is adiabatic beds in series (:func:`purgeplan.coefficients.adiabatic_beds`),
    cooled or, with ``between_beds = "quench"``, quenched between them, else one
    isothermal bed at the reactor temperature.  ``equilibrium_method``
    names how K(T) is found ("ammonia_gillespie_beattie" or "formation_data"),
    None without equilibrium data; ``equilibrium_rhs`` is the right-hand side
    ln K - dnu ln(P/P0) - sum nu ln phi - ln K_phi at the reactor's
    temperature and pressure (see :func:`purgeplan.coefficients.equilibrium_rhs`).
    """

    name: str
    stoichiometry: dict[str, float]
    key_reactant: str
    per_pass: str
    per_pass_conversion: float | None
    approach_to_equilibrium: float | None
    equilibrium_method: str | None
    fugacity: str
    fugacity_correction_factor: float
    delta_h_298_j_mol: float | None
    delta_s_298_j_mol_k: float | None
    delta_cp_coefficients: tuple | None
    sizing: dict | None
    equilibrium_rhs: float | None = None
    rate: dict | None = None

    @property
    def key_coefficient(self) -> float:
        """|nu| of the key reactant [-]."""
        return -self.stoichiometry[self.key_reactant]

    @property
    def _size_spec(self) -> dict | None:
        """The table that bounds a sized or rate-based reactor's conversion."""
        return self.sizing if self.per_pass == "sized" else self.rate

    @property
    def approach_to_equilibrium_max(self) -> float | None:
        """A sized or rate-based reactor's bound on X / X_e, None for none [-]."""
        spec = self._size_spec
        return spec.get("approach_to_equilibrium_max") if spec else None

    @property
    def conversion_bounds(self) -> tuple[float, float]:
        """The box of a sized or rate-based reactor's per-pass conversion [-]."""
        spec = self._size_spec
        return spec["conversion_min"], spec["conversion_max"]


@dataclass(frozen=True)
class Source:
    """A feed the loop buys; its price lives in :attr:`Prices.source_price_per_kmol`."""

    name: str
    composition: dict[str, float]
    supply_limit_kmol_h: float | None
    enters: str                         # "makeup" | "reactor_feed"
    compression_work_kj_kmol: float     # isentropic (gas) or pump (liquid), supply to loop
    temperature_c: float
    phase: str = "gas"                  # "gas" (compressed) | "liquid" (pumped)


@dataclass(frozen=True)
class InletRatio:
    """A ratio of two linear forms of the reactor-inlet flows [-].

    ``numerator`` and ``denominator`` map components to coefficients;
    ``min_ratio``/``max_ratio`` are limits (None for none) and
    ``stoichiometric`` the value the reactions consume the reactants in.
    """

    name: str
    numerator: dict[str, float]
    denominator: dict[str, float]
    min_ratio: float | None
    max_ratio: float | None
    stoichiometric: float


@dataclass(frozen=True)
class Capital:
    reference_cost: float
    reference_size: float
    exponent: float


@dataclass(frozen=True)
class Prices:
    """Prices and economic inputs; every field is a sensitivity lever."""

    currency: str
    hours_per_year: float
    discount_rate: float
    life_years: float
    cost_index_ratio: float
    power_price_per_kwh: float
    fuel_price_per_gj: float
    flare_cost_per_kmol: float
    product_price_per_t: float
    catalyst_price_per_m3: float
    catalyst_life_years: float
    compressor_capital: Capital
    reactor_capital: Capital
    recovery_capital: Capital | None
    recovery_operating_cost_per_kmol: float
    source_price_per_kmol: dict[str, float]
    co2_price_per_t: float | None = None          # None: no emissions line
    reactor_pressure_factor: float = 1.0          # F_P(loop) / F_P(reference pressure)
    recovery_export_price_per_kmol: float = 0.0
    cooling_water_price_per_gj: float = 0.0
    refrigeration_capital: Capital | None = None


@dataclass(frozen=True)
class Cooling:
    """The separator's cooling: a water cooler, then refrigeration down to the separator.

    Enthalpy changes per kmol of each component [kJ/kmol], fixed by the
    temperatures (see :func:`purgeplan.build.build_loop`):
    ``sensible_kj_kmol`` ideal gas from reactor to separator temperature,
    ``latent_kj_kmol`` enthalpy of vaporisation at separator temperature,
    ``water_sensible_kj_kmol`` ideal gas from reactor temperature to the water
    cooler's outlet and ``water_latent_kj_kmol`` the condensing product's
    enthalpy of vaporisation there.  ``water_vapour_ratio`` is the product's
    moles per mole of other gas in the vapour at the water cooler's outlet
    (Raoult's law as in the separator), None where nothing condenses there.
    ``refrigerated`` is False when the water cooler reaches the separator
    temperature itself; ``coefficient_of_performance`` that of the refrigeration.
    """

    water_outlet_temperature_k: float
    sensible_kj_kmol: dict[str, float]
    latent_kj_kmol: dict[str, float]
    water_sensible_kj_kmol: dict[str, float]
    water_latent_kj_kmol: float
    water_vapour_ratio: float | None
    refrigerated: bool
    coefficient_of_performance: float


@dataclass(frozen=True)
class Loop:
    """Everything the engine and the model need, as plain picklable data."""

    name: str
    components: tuple[str, ...]
    data: dict[str, ComponentData]
    inerts: tuple[str, ...]
    reactions: tuple[Reaction, ...]
    sources: tuple[Source, ...]
    liquid_fraction: dict[str, float]
    condensing: str | None
    condensate_vapour_ratio: float
    recovery_return_fraction: dict[str, float] | None
    recovery_name: str
    destination: str
    basis: str
    product: str
    production_kmol_h: float | None
    makeup_kmol_h: float | None
    inlet_ratios: tuple[tuple[str, str, float], ...]
    pressure_bar: float
    pressure_drop_bar: float
    reactor_temperature_k: float
    separator_temperature_k: float
    space_velocity_per_h: float
    recycle_inlet_temperature_k: float
    recycle_efficiency: float
    makeup_efficiency: float
    makeup_stages: int
    purge_fraction: float
    purge_fraction_min: float
    purge_fraction_max: float
    max_inert_fraction_reactor_inlet: float | None
    max_recycle_power_kw: float | None
    prices: Prices
    streams: tuple[str, ...] = field(default=())
    fuel_capacity_gj_h: float | None = None
    compressor_arrangement: str = "two_machines"
    recovery_export_fraction: dict[str, float] | None = None
    recovery_recompression: str = "none"     # "none" | "makeup_compressor" | "own_compressor"
    recovery_recompression_work_kj_kmol: float = 0.0
    recovery_return_pressure_bar: float | None = None
    letdown_release_fraction: dict[str, float] | None = None
    letdown_pressure_bar: float | None = None
    letdown_destination: str = "fuel"
    ratios: tuple[InletRatio, ...] = ()
    gas_inventory_kmol: float | None = None
    pump_efficiency: float = 0.65
    peng_robinson: PengRobinsonData | None = None   # None: the compressors' gas is ideal
    cooling: Cooling | None = None
    #: "split_fractions" (``liquid_fraction`` and ``condensing``), "henry_raoult"
    #: (K-values ``separator_k_values``, fixed but for ``separator_activity``) or
    #: "peng_robinson" (K-values at the state from ``separator_peng_robinson``: Tc, Pc,
    #: omega, kij in component order).
    separator_model: str = "split_fractions"
    separator_k_values: dict[str, float] | None = None
    separator_peng_robinson: tuple | None = None
    #: A Henry-Raoult separator's condensing components and their UNIFAC groups, whose
    #: activity coefficients at the state multiply their K-values; None: gamma = 1.
    separator_activity: tuple | None = None

    @property
    def ratio_limits(self) -> tuple[InletRatio, ...]:
        """The inlet ratios held as limits: those with a bound, where the blend is free."""
        if not self.blend_free:
            return ()
        return tuple(r for r in self.ratios
                     if r.min_ratio is not None or r.max_ratio is not None)

    @property
    def outlet_streams(self) -> tuple[str, ...]:
        """The streams that leave the loop: liquid product, purge gas and any exports."""
        liquid = (("letdown_liquid", "letdown_gas") if "letdown_gas" in self.streams
                  else ("liquid_product",))
        export = ("recovery_export",) if "recovery_export" in self.streams else ()
        return (*liquid, self.disposal_stream, *export)

    @property
    def makeup_sources(self) -> tuple[Source, ...]:
        return tuple(s for s in self.sources if s.enters == "makeup")

    @property
    def feed_streams(self) -> tuple[str, ...]:
        """The streams that bring bought feed into the loop."""
        return tuple(s for s in ("makeup", "direct_feed") if s in self.streams)

    @property
    def disposal_stream(self) -> str:
        return "recovery_tail_gas" if self.recovery_return_fraction is not None else "purge"

    @property
    def sized_reaction(self) -> int | None:
        """The reaction whose per-pass conversion is a design variable (its reactor's size)."""
        return next((i for i, r in enumerate(self.reactions)
                     if r.per_pass in ("sized", "rate")), None)

    @property
    def rate_reaction(self) -> int | None:
        """The reaction whose catalyst is sized from a rate expression, if any."""
        return next((i for i, r in enumerate(self.reactions) if r.rate is not None), None)

    @property
    def product_molar_mass(self) -> float:
        return self.data[self.product].molar_mass_kg_kmol

    @property
    def blend_free(self) -> bool:
        """Whether the balances leave freedom: a feed group with more than one source."""
        groups = [s.enters for s in self.sources]
        return len(groups) != len(set(groups))
