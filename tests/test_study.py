"""The study layer: ranking, break-even premium, sensitivity, determinism."""

from __future__ import annotations

import json
import tomllib
from pathlib import Path

import pytest

from purgeplan.case import validate_case_dict
from purgeplan.output.json_out import study_document
from purgeplan.solve import optimise
from purgeplan.study import run_study, with_source_prices

CASE = Path(__file__).resolve().parents[1] / "cases" / "ammonia_demo.toml"


def _raw():
    return tomllib.loads(CASE.read_text(encoding="utf-8"))


def _reversed(raw):
    """The same case with every option, and every option's choices, written in reverse order."""
    raw = dict(raw)
    raw["options"] = {opt: dict(reversed(list(choices.items())))
                      for opt, choices in reversed(list(raw["options"].items()))}
    return raw


@pytest.fixture(scope="module")
def study():
    return run_study(validate_case_dict(_raw()), "sha")


def test_ranking_is_by_tac_and_complete(study):
    ranked = study.ranked
    assert [a.rank for a in ranked] == list(range(1, len(ranked) + 1))
    tacs = [a.optimum.state.tac_per_year for a in ranked]
    assert tacs == sorted(tacs)
    # 3 make-up choices (two grades and their blend) x 2 destinations x 3 recovery choices
    assert len(study.alternatives) == 18


def test_ranking_does_not_depend_on_option_order(study):
    again = run_study(validate_case_dict(_reversed(_raw())), "sha")
    assert [a.name for a in again.alternatives] == [a.name for a in study.alternatives]
    for a, b in zip(again.alternatives, study.alternatives, strict=True):
        assert a.optimum.state.tac_per_year == pytest.approx(b.optimum.state.tac_per_year,
                                                             rel=1e-12)


def test_break_even_premium_ties_the_two_alternatives(study):
    """At the reported premium the purer grade's best alternative costs what the base's does."""
    assert study.break_even, "the demo has two make-up grades"
    for be in study.break_even:
        alt = next(a for a in study.alternatives if a.name == be.alternative)
        base = next(a for a in study.alternatives if a.name == be.base_alternative)
        tie = optimise(with_source_prices(alt.loop, {be.grade: be.tie_price_per_kmol}))
        target = base.optimum.state.tac_per_year
        assert abs(tie.state.tac_per_year - target) <= 1e-6 * target
        assert be.premium_per_kmol == pytest.approx(
            be.tie_price_per_kmol - be.base_price_per_kmol, rel=1e-12)
        assert be.premium_percent == pytest.approx(
            100 * be.premium_per_kmol / be.base_price_per_kmol, rel=1e-12)


def test_sensitivity_swings_have_the_expected_signs(study):
    """Dearer inputs cost more; a larger fuel credit costs less (signs of the cost model)."""
    best = study.best.name
    rows = {r.lever: r.tac[best] for r in study.sensitivity}
    for lever in ("makeup_gas_price", "power_price", "catalyst_price", "capital_cost",
                  "discount_rate"):
        assert rows[lever].low < rows[lever].base < rows[lever].high, lever
    assert rows["fuel_price"].low > rows["fuel_price"].base > rows["fuel_price"].high
    assert rows["compressor_efficiency"].low > rows["compressor_efficiency"].high


def test_off_optimum_band_contains_the_optimum(study):
    for alt in study.ranked:
        off, s = alt.optimum.off_optimum, alt.optimum.state
        lo, hi = off.band_1pct_purge_fraction
        assert lo <= s.purge_fraction <= hi
        for tac in (off.tac_half_purge_per_year, off.tac_double_purge_per_year):
            if tac is not None:
                assert tac >= s.tac_per_year


def _stable(doc):
    """The JSON document without timestamps and timings."""
    doc = json.loads(json.dumps(doc))
    doc.pop("created", None)
    for alt in doc["alternatives"]:
        alt["solver"].pop("seconds", None)
    if doc.get("uncertainty"):
        doc["uncertainty"].pop("seconds")
    return doc


def test_same_case_twice_gives_identical_results(study):
    again = run_study(validate_case_dict(_raw()), "sha")
    assert _stable(study_document(again)) == _stable(study_document(study))


def test_explicit_alternatives_and_exclusions():
    """A case may list alternatives itself, or exclude combinations of choices."""
    from purgeplan.case import expand_alternatives

    raw = _raw()
    raw["exclude"] = [{"makeup_grade": "purified", "recovery": "membrane"}]
    names = [n for n, _, _ in expand_alternatives(validate_case_dict(raw))]
    assert len(names) == 16 and not any("purified" in n and "membrane" in n for n in names)
    raw = _raw()
    raw["alternatives"] = [{"name": "present plant", "choices": {
        "makeup_grade": "standard", "purge_destination": "fuel", "recovery": "none"}}]
    (name, choices, case), = expand_alternatives(validate_case_dict(raw))
    assert name == "present plant" and case.purge.recovery == "none"
    assert case.makeup_sources == ["standard"]
