"""Recovery recompression and export, direct feeds and let-down gas: their workbook cost lines.

Reference: the tool's own cost model (:func:`purgeplan.costs.evaluate`); the
workbook's live formulas are evaluated by LibreOffice Calc (headless, as in
tests/test_workbook.py) and compared with the engine to 1e-9 relative.
"""

from __future__ import annotations

import hashlib

import openpyxl
import pytest
from test_recovery import HYDROGEN_FEED, case_text
from test_workbook import REL, cost_cells, needs_soffice, recalculate

from purgeplan.case import parse_case_text
from purgeplan.output.workbook import write_workbook
from purgeplan.study import run_study

EXTRA = """
[sources.liquid_nitrogen]
composition = { N2 = 1.0 }
price_per_kmol = 1.5
supply_pressure_bar = 2
temperature_c = -196
enters = "reactor_feed"
phase = "liquid"
liquid_density_kg_m3 = 807

[recovery_units.own]
return_fraction = { H2 = 0.8, N2 = 0.05 }
export_fraction = { Ar = 0.6 }
export_price_per_kmol = 12.0
capital = { reference_cost = 4.0e6, reference_size = 500 }
return_pressure_bar = 20
recompression = "own_compressor"
recompression_stages = 2

[recovery_units.makeup]
return_fraction = { H2 = 0.8, N2 = 0.05 }
capital = { reference_cost = 3.0e6, reference_size = 500 }
return_pressure_bar = 70

[options.unit.none]
purge = { recovery = "none" }
[options.unit.own]
purge = { recovery = "own" }
[options.unit.makeup]
purge = { recovery = "makeup" }
[options.feed.syngas]
makeup_sources = ["syngas"]
[options.feed.hydrogen]
makeup_sources = ["syngas", "hydrogen"]
loop = { inlet_ratios = [{ numerator = "H2", denominator = "N2", value = 3.3 }] }
[options.feed.nitrogen]
makeup_sources = ["syngas", "liquid_nitrogen"]
loop = { inlet_ratios = [{ numerator = "H2", denominator = "N2", value = 2.9 }] }
[options.letdown.fuel]
separator = { letdown_destination = "fuel" }
[options.letdown.flare]
separator = { letdown_destination = "flare" }

[[alternatives]]
name = "own compressor, export, let-down to flare"
choices = { unit = "own", feed = "syngas", letdown = "flare" }
[[alternatives]]
name = "make-up compressor, let-down to fuel"
choices = { unit = "makeup", feed = "syngas", letdown = "fuel" }
[[alternatives]]
name = "hydrogen fed directly"
choices = { unit = "none", feed = "hydrogen", letdown = "fuel" }
[[alternatives]]
name = "liquid nitrogen fed directly"
choices = { unit = "none", feed = "nitrogen", letdown = "fuel" }
"""

NEW_LINES = {"recovery_recompression_power", "recovery_recompression_capital",
             "recovery_export_sales", "direct_feed_compression_power",
             "direct_feed_compressor_capital", "direct_feed_pumping_power",
             "letdown_fuel_credit", "letdown_flaring", "letdown_co2_emissions"}


def study_text() -> str:
    text = case_text(sources=HYDROGEN_FEED.format(supply=20.0))
    text = text.replace('recovery = "unit"', 'recovery = "none"')
    text = text.replace("liquid_fraction = { NH3 = 0.9,",
                        "letdown_pressure_bar = 20\nliquid_fraction = { NH3 = 0.9,")
    return 'makeup_sources = ["syngas"]\n' + text + EXTRA


@pytest.fixture(scope="module")
def study():
    text = study_text()
    sha = hashlib.sha256(text.encode("utf-8")).hexdigest()
    return run_study(parse_case_text(text), sha, sensitivity_alternatives=0)


def test_every_new_line_is_in_the_study(study):
    seen = {k for a in study.alternatives for k in a.optimum.state.costs}
    assert NEW_LINES <= seen


@needs_soffice
def test_recalculated_new_lines_equal_engine(study, tmp_path):
    """Source: purgeplan.costs.evaluate (engine) vs LibreOffice Calc evaluating the formulas."""
    written = write_workbook(tmp_path / "units.xlsx", study)
    wb = openpyxl.load_workbook(recalculate(written, tmp_path), data_only=True)
    cells = cost_cells(wb)
    checked = set()
    for alt in study.alternatives:
        i = int(alt.code[1:])       # the cost build-up numbers alternatives by code
        s = alt.optimum.state
        assert set(cells[i]["lines"]) == set(s.costs), alt.name
        for key, want in s.costs.items():
            assert cells[i]["lines"][key] == pytest.approx(want, rel=REL, abs=1e-6), (alt.name,
                                                                                      key)
            checked.add(key)
        assert cells[i]["tac"] == pytest.approx(s.tac_per_year, rel=REL)
    assert NEW_LINES <= checked
