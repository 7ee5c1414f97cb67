"""Shared fixtures: small case files written as TOML text and built into loops."""

from __future__ import annotations

import json

import pytest

import purgeplan

ECONOMICS = """
[economics]
power_price_per_kwh = 0.07
compressor_capital = { reference_cost = 6.0e6, reference_size = 10000, exponent = 0.62 }
reactor_capital = { reference_cost = 8.0e6, reference_size = 60, exponent = 0.65 }
"""

#: On the make-up basis a product price is required (case validation refuses 0).
MAKEUP_BASIS_PRODUCT_PRICE = "product_price_per_t = 300.0\n"


def inline(table: dict) -> str:
    """A TOML inline table; floats keep their full repr, strings are quoted."""
    items = []
    for key, value in table.items():
        text = json.dumps(value) if isinstance(value, str) else repr(value)
        items.append(f"{key} = {text}")
    return "{ " + ", ".join(items) + " }"


def case_toml(*, makeup: dict, liquid_fraction: dict,
              stoichiometry: dict | None = None, key_reactant: str = "N2",
              reaction: str = 'per_pass = "fixed"\nper_pass_conversion = 0.25',
              components: tuple[str, ...] | None = None, component_overrides: dict | None = None,
              reactor_temperature_c: float = 450.0, pressure_bar: float = 200.0,
              basis: str = "makeup", makeup_kmol_h: float = 1000.0,
              production_t_d: float = 1000.0, purge_fraction: float = 0.02,
              separator_temperature_c: float = 0.0, supply_pressure_bar: float | None = None,
              recovery: dict | None = None) -> str:
    """Text of a one-reaction case (ammonia synthesis by default) with one make-up source."""
    stoichiometry = stoichiometry or {"N2": -1, "H2": -3, "NH3": 2}
    names = components or tuple(dict.fromkeys([*stoichiometry, *makeup, *liquid_fraction]))
    overrides = component_overrides or {}
    comp_lines = "\n".join(f"{c} = {inline(overrides.get(c, {}))}" for c in names)
    size = (f"makeup_kmol_h = {makeup_kmol_h!r}" if basis == "makeup"
            else f"production_t_d = {production_t_d!r}")
    supply = supply_pressure_bar if supply_pressure_bar is not None else min(30.0, pressure_bar)
    text = f"""
[components]
{comp_lines}

[[reactions]]
name = "synthesis"
stoichiometry = {inline(stoichiometry)}
key_reactant = "{key_reactant}"
{reaction}

[reactor]
temperature_c = {reactor_temperature_c!r}

[loop]
pressure_bar = {pressure_bar!r}
pressure_drop_bar = {0.04 * pressure_bar!r}
basis = "{basis}"
{size}
product = "NH3"
purge_fraction = {purge_fraction!r}

[separator]
temperature_c = {separator_temperature_c!r}
liquid_fraction = {inline(liquid_fraction)}

[sources.gas]
composition = {inline(makeup)}
price_per_kmol = 2.0
supply_pressure_bar = {supply!r}
"""
    if recovery is not None:
        text += f"""
[purge]
recovery = "unit"

[recovery_units.unit]
return_fraction = {inline(recovery)}
capital = {{ reference_cost = 3.0e6, reference_size = 500 }}
"""
    if basis == "makeup":
        return text + ECONOMICS.replace("[economics]\n",
                                        "[economics]\n" + MAKEUP_BASIS_PRODUCT_PRICE)
    return text + ECONOMICS


def loop_from_text(text: str):
    """Validate case text and build its loop."""
    return purgeplan.build_loop(purgeplan.parse_case_text(text))


def assert_no_cheaper_nearby(loop, state, points: int = 31, top: float | None = None) -> None:
    """An optimum of a loop whose per-pass conversion is a decision against independent
    evaluations: the direct engine reproduces its TAC and finds none lower on a
    ``points`` x ``points`` grid of purge fraction (a/2 to 2a) and conversion (0.8 to 1.2
    X, below equilibrium), nor does the LP on 101 conversions from X/2 to ``top``
    (default 1.5 X) at its purge fraction."""
    import math

    import numpy as np

    from purgeplan.errors import NoSteadyStateError
    from purgeplan.reduced_space import LoopLP

    a, x = state.purge_fraction, state.conversion[0]

    def tac(aa, xx):
        try:
            return purgeplan.steady_state(loop, aa, conversion={0: xx}).tac_per_year
        except NoSteadyStateError:
            return math.inf

    assert tac(a, x) == pytest.approx(state.tac_per_year, rel=1e-9)
    grid = min(tac(aa, xx) for aa in np.geomspace(a / 2, 2 * a, points)
               for xx in np.linspace(0.8 * x, min(1.2 * x, 0.999 * state.equilibrium_conversion[0]),
                                     points))
    assert state.tac_per_year <= grid * (1 + 1e-9)
    solver = LoopLP(loop)
    scan = [solver.tac(a, xx) for xx in np.linspace(0.5 * x, 1.5 * x if top is None else top, 101)]
    assert state.tac_per_year <= min(scan) * (1 + 1e-9)


@pytest.fixture(scope="session")
def make_loop():
    """Build a loop from the keyword arguments of :func:`case_toml`."""
    return lambda **kwargs: loop_from_text(case_toml(**kwargs))
