"""Price scenarios: the fast route against from-scratch optimisation, and the statistics.

Each check compares with something outside the scenario code: an ``optimize``
of a case file with the scenario's prices written in, closed-form moments of
the distributions (NIST/SEMATECH e-Handbook of Statistical Methods, section
1.3.6.6), Spearman's coefficient from scipy, and the Ishigami function's
analytical Sobol indices (docs/references.md).
"""

from __future__ import annotations

import dataclasses
import json
import math
import re
import tomllib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import event, given, settings
from hypothesis import strategies as st
from scipy import stats

from purgeplan import build_loop
from purgeplan.case import expand_alternatives, parse_case_text, validate_case_dict
from purgeplan.cli import main
from purgeplan.errors import CaseError
from purgeplan.sampling import (
    Distribution,
    impose_rank_correlation,
    scenario_values,
    sobol_indices,
    sobol_plan,
    unit_samples,
)
from purgeplan.solve import optimise
from purgeplan.uncertainty import (
    CHUNK,
    ROUTE_REOPTIMISED,
    ROUTE_STATES,
    optima_over,
    route_for,
    run_uncertainty,
    uncertain_inputs,
    with_inputs,
)

DEMO_TEXT = (Path(__file__).resolve().parents[1] / "cases" / "ammonia_demo.toml").read_text()
#: The demo without its own [uncertainty] table; the tests give theirs.
DEMO = DEMO_TEXT[:DEMO_TEXT.index("\n[uncertainty]") + 1]

# invented distributions around the demo's invented prices
UNCERTAINTY = """
[uncertainty]
scenarios = 40
seed = 5

[[uncertainty.inputs]]
input = "sources.standard.price_per_kmol"
distribution = "triangular"
low = 1.9
mode = 2.3
high = 2.9

[[uncertainty.inputs]]
input = "sources.purified.price_per_kmol"
distribution = "uniform"
low = 2.0
high = 3.0

[[uncertainty.inputs]]
input = "economics.power_price_per_kwh"
distribution = "lognormal"
median = 0.07
sigma_log = 0.3
low = 0.02
high = 0.2

[[uncertainty.inputs]]
input = "economics.fuel_price_per_gj"
distribution = "normal"
mean = 7.5
standard_deviation = 2.0
low = 0.0
high = 15.0

[[uncertainty.correlations]]
inputs = ["sources.standard.price_per_kmol", "sources.purified.price_per_kmol"]
rank_correlation = 0.7
"""


@pytest.fixture(scope="module")
def demo():
    case = parse_case_text(DEMO + UNCERTAINTY)
    loops = {name: build_loop(c, name) for name, _, c in expand_alternatives(case)}
    return case, loops


def _square(loops, grades=("standard", "purified")):
    return [(n, lp) for n, lp in loops.items()
            if route_for(lp) == ROUTE_STATES and any(f"makeup_grade={g}," in n for g in grades)]


def _written_in(paths, row) -> str:
    """The demo case's text with one scenario's values written over the demo's own."""
    text = DEMO
    for path, value in zip(paths, row, strict=True):
        parts = path.split(".")
        if parts[0] == "sources":
            section, key = rf"\[sources\.{parts[1]}\]", "price_per_kmol"
        else:
            section, key = r"\[economics\]", parts[1]
        pattern = rf"({section}[^\[]*?\n{key} = )[^\s#]+"
        text, n = re.subn(pattern, rf"\g<1>{float(value)!r}", text, count=1, flags=re.S)
        assert n == 1, path
    return text


def test_fast_route_equals_optimize_of_the_case_with_the_prices_written_in(demo):
    case, loops = demo
    chosen = _square(loops)
    assert len(chosen) >= 6
    result = run_uncertainty(case, chosen)
    assert {a.route for a in result.alternatives} == {ROUTE_STATES}
    names = [n for n, _ in chosen]
    for s in (0, 13, 27, 39):
        text = _written_in(result.inputs, result.values[s])
        written = {n: build_loop(c, n) for n, _, c in expand_alternatives(parse_case_text(text))}
        tac = {n: optimise(written[n], details=False).state.tac_per_year for n in names}
        for i, n in enumerate(names):
            assert result.tac[i, s] == pytest.approx(tac[n], rel=1e-6)
        assert names[int(np.argmin(result.tac[:, s]))] == min(tac, key=tac.get)


def test_fast_route_optimum_within_the_method_tolerance_in_every_scenario(demo):
    """Every scenario, not a sample: TAC within 1e-8 of a from-scratch optimum (two of them)."""
    case, loops = demo
    chosen = [(n, lp) for n, lp in _square(loops, ("standard",)) if "purge_destination=fuel" in n]
    result = run_uncertainty(case, chosen)
    for i, (_, lp) in enumerate(chosen[:2]):
        for s, row in enumerate(result.values):
            ref = optimise(with_inputs(lp, dict(zip(result.inputs, row, strict=True))),
                           details=False).state
            assert result.tac[i, s] == pytest.approx(ref.tac_per_year, rel=1e-8)


def test_the_same_seed_gives_the_same_result_and_another_seed_does_not(demo):
    case, loops = demo
    chosen = _square(loops)[:3]
    one, two = run_uncertainty(case, chosen), run_uncertainty(case, chosen)
    assert np.array_equal(one.values, two.values) and np.array_equal(one.tac, two.tac)
    assert one.alternatives == two.alternatives
    other = case.model_copy(update={"uncertainty": case.uncertainty.model_copy(
        update={"seed": 6})})
    assert not np.array_equal(run_uncertainty(other, chosen).values, one.values)


def test_probabilities_sum_to_one_and_regret_is_never_negative(demo):
    case, loops = demo
    result = run_uncertainty(case, _square(loops))
    assert sum(a.probability_best for a in result.alternatives) == pytest.approx(1.0, abs=1e-12)
    assert all(a.expected_regret >= 0.0 for a in result.alternatives)
    best = max(result.alternatives, key=lambda a: a.probability_best)
    assert result.recommended == best.name


def test_an_alternative_that_dominates_in_every_scenario(demo):
    """The same loop with a dearer catalyst (not an uncertain input) costs more in every one."""
    case, loops = demo
    name, lp = _square(loops)[0]
    dear = dataclasses.replace(lp, name="dear", prices=dataclasses.replace(
        lp.prices, catalyst_price_per_m3=2.0 * lp.prices.catalyst_price_per_m3 + 1000.0))
    result = run_uncertainty(case, [(name, lp), ("dear", dear)])
    cheap, dearer = result.alternatives
    assert cheap.probability_best == 1.0 and cheap.expected_regret == 0.0
    assert dearer.probability_best == 0.0 and dearer.expected_regret > 0.0


def test_routes_on_a_pool_and_on_a_dask_cluster_give_the_in_process_results(demo):
    distributed = pytest.importorskip("distributed")
    case, loops = demo
    blend = next(lp for n, lp in loops.items() if route_for(lp) == ROUTE_REOPTIMISED)
    chosen = [lp for _, lp in _square(loops)[:2]] + [blend]
    routes = [route_for(lp) for lp in chosen]
    inputs = uncertain_inputs(case)
    paths = tuple(x.path for x in inputs)
    values = scenario_values([x.distribution for x in inputs], CHUNK + 3, 9)
    here = optima_over(chosen, routes, paths, values)
    pool = optima_over(chosen, routes, paths, values, jobs=2)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        remote = optima_over(chosen, routes, paths, values, client=client)
    for other in (pool, remote):
        for a, b in zip(here[:3], other[:3], strict=True):
            assert np.array_equal(a, b, equal_nan=True)
        assert other[3:] == here[3:] == (CHUNK + 3, False)


def test_ctrl_c_keeps_the_scenarios_finished_for_every_alternative(demo):
    case, loops = demo
    square = _square(loops)[0][1]
    blend = next(lp for n, lp in loops.items() if route_for(lp) == ROUTE_REOPTIMISED)
    inputs = uncertain_inputs(case)
    paths = tuple(x.path for x in inputs)
    values = scenario_values([x.distribution for x in inputs], 2 * CHUNK, 3)
    calls = []

    def progress(n):
        calls.append(n)
        if len(calls) == 2:  # the square alternative, then the blend's first block
            raise KeyboardInterrupt
    tac, _, _, finished, interrupted = optima_over(
        [square, blend], [ROUTE_STATES, ROUTE_REOPTIMISED], paths, values, progress=progress)
    assert interrupted and finished == CHUNK
    assert np.isfinite(tac[:, :CHUNK]).all() and np.isnan(tac[1, CHUNK:]).all()


# ---------------------------------------------------------------------------
# the distributions and the sampling plans


N = 40_000


@pytest.mark.parametrize("dist,mean,sd", [
    # NIST/SEMATECH e-Handbook 1.3.6.6.2 (uniform): (a+b)/2, (b-a)/sqrt(12)
    (Distribution("uniform", low=2.0, high=5.0), 3.5, 3.0 / math.sqrt(12.0)),
    # triangular (a, c, b): (a+b+c)/3, sqrt((a2+b2+c2-ab-ac-bc)/18)
    (Distribution("triangular", low=1.0, mode=2.0, high=6.0), 3.0,
     math.sqrt((1 + 36 + 4 - 6 - 2 - 12) / 18.0)),
    # normal, bounds far out (10 sd): mean and sd as given
    (Distribution("normal", mean=7.5, standard_deviation=1.5, low=-7.5, high=22.5), 7.5, 1.5),
    # lognormal with median m and sigma s: m exp(s2/2), that times sqrt(exp(s2)-1)
    (Distribution("lognormal", median=0.07, sigma_log=0.25, low=1e-9, high=10.0),
     0.07 * math.exp(0.25 ** 2 / 2), 0.07 * math.exp(0.25 ** 2 / 2)
     * math.sqrt(math.expm1(0.25 ** 2))),
])
def test_sample_moments_match_the_distributions(dist, mean, sd):
    x = dist.from_unit(unit_samples(N, 1, 21)[:, 0])
    assert dist.moments() == pytest.approx((mean, sd), rel=1e-6)
    # within four standard errors of the mean and of the standard deviation
    assert abs(x.mean() - mean) < 4 * sd / math.sqrt(N)
    assert abs(x.std() - sd) < 4 * sd / math.sqrt(2 * N)


def test_bounds_cut_a_distribution_and_its_moments_follow():
    dist = Distribution("normal", mean=1.0, standard_deviation=1.0, low=0.0)
    x = dist.from_unit(unit_samples(N, 1, 4)[:, 0])
    assert x.min() >= 0.0
    ref = stats.truncnorm(-1.0, np.inf, loc=1.0, scale=1.0)  # scipy's truncated normal
    assert dist.moments() == pytest.approx((ref.mean(), ref.std()), rel=1e-6)
    assert abs(x.mean() - ref.mean()) < 4 * ref.std() / math.sqrt(N)


def test_rank_correlation_is_imposed_and_the_marginals_kept():
    u = unit_samples(5000, 3, 8)
    target = np.array([[1.0, 0.7, -0.3], [0.7, 1.0, 0.0], [-0.3, 0.0, 1.0]])
    v = impose_rank_correlation(u, target, 8)
    rho = stats.spearmanr(v).statistic
    assert rho == pytest.approx(target, abs=0.03)
    assert np.array_equal(np.sort(v, axis=0), np.sort(u, axis=0))


def test_sobol_indices_of_the_ishigami_function():
    """Ishigami and Homma (1990), a = 7, b = 0.1, inputs uniform on [-pi, pi].

    Analytical: V = a2/8 + b pi4/5 + b2 pi8/18 + 1/2; V1 = (1 + b pi4/5)2 / 2,
    V2 = a2/8, V13 = b2 pi8 (1/18 - 1/50): S1 = 0.3139, S2 = 0.4424, S3 = 0,
    ST1 = 0.5576, ST2 = 0.4424, ST3 = 0.2437 (docs/references.md).
    """
    a, b, pi = 7.0, 0.1, math.pi
    v = a * a / 8 + b * pi ** 4 / 5 + b * b * pi ** 8 / 18 + 0.5
    v1, v2, v13 = 0.5 * (1 + b * pi ** 4 / 5) ** 2, a * a / 8, b * b * pi ** 8 * (1 / 18 - 1 / 50)
    first, total = [v1 / v, v2 / v, 0.0], [(v1 + v13) / v, v2 / v, v13 / v]
    assert first == pytest.approx([0.3139, 0.4424, 0.0], abs=1e-4)
    assert total == pytest.approx([0.5576, 0.4424, 0.2437], abs=1e-4)
    uniform = Distribution("uniform", low=-pi, high=pi)
    x = sobol_plan([uniform] * 3, 2 ** 13, seed=3)
    y = np.sin(x[:, 0]) + a * np.sin(x[:, 1]) ** 2 + b * x[:, 2] ** 4 * np.sin(x[:, 0])
    si = sobol_indices(["x1", "x2", "x3"], y, seed=3)
    assert si.first == pytest.approx(first, abs=0.03)
    assert si.total == pytest.approx(total, abs=0.03)


# ---------------------------------------------------------------------------
# the case table and the command


def _with(table: str) -> str:
    return DEMO + table


@pytest.mark.parametrize("table,field", [
    ("""[uncertainty]\nscenarios = 10\n[[uncertainty.inputs]]\ninput = "economics.power"
distribution = "uniform"\nlow = 0.05\nhigh = 0.09\n""", "uncertainty.inputs[0].input"),
    ("""[uncertainty]\nscenarios = 10\n[[uncertainty.inputs]]
input = "economics.power_price_per_kwh"\ndistribution = "triangular"\nlow = 0.05\nhigh = 0.09\n""",
     "uncertainty.inputs[0].mode"),
    ("""[uncertainty]\nscenarios = 10\n[[uncertainty.inputs]]
input = "economics.power_price_per_kwh"\ndistribution = "uniform"\nlow = 0.09\nhigh = 0.05\n""",
     "uncertainty.inputs[0].high"),
    ("""[uncertainty]\nscenarios = 10\n[[uncertainty.inputs]]
input = "economics.power_price_per_kwh"\ndistribution = "normal"\nmean = 0.07
standard_deviation = 0.03\n""", "uncertainty.inputs[0].low"),
    ("""[uncertainty]\nscenarios = 10\n[[uncertainty.inputs]]
input = "sources.nosuch.price_per_kmol"\ndistribution = "uniform"\nlow = 1.0\nhigh = 2.0\n""",
     "uncertainty.inputs[0].input"),
    ("""[uncertainty]\nscenarios = 10\n[[uncertainty.inputs]]
input = "economics.power_price_per_kwh"\ndistribution = "uniform"\nlow = 0.05\nhigh = 0.09
[[uncertainty.inputs]]\ninput = "economics.fuel_price_per_gj"\ndistribution = "uniform"
low = 5.0\nhigh = 9.0\n[[uncertainty.inputs]]\ninput = "sources.standard.price_per_kmol"
distribution = "uniform"\nlow = 2.0\nhigh = 2.6
[[uncertainty.correlations]]
inputs = ["economics.power_price_per_kwh", "economics.fuel_price_per_gj"]
rank_correlation = 0.9
[[uncertainty.correlations]]
inputs = ["economics.power_price_per_kwh", "sources.standard.price_per_kmol"]
rank_correlation = 0.9
[[uncertainty.correlations]]
inputs = ["economics.fuel_price_per_gj", "sources.standard.price_per_kmol"]
rank_correlation = -0.9\n""", "uncertainty.correlations"),
])
def test_bad_uncertainty_tables_are_refused_naming_the_field(table, field):
    with pytest.raises(CaseError) as exc:
        parse_case_text(_with(table))
    assert exc.value.path == field


def test_an_emission_price_needs_an_emissions_line():
    text = re.sub(r"\nco2_price_per_t = [^\n]*", "\n", DEMO)
    table = """[uncertainty]\nscenarios = 10\n[[uncertainty.inputs]]
input = "economics.co2_price_per_t"\ndistribution = "uniform"\nlow = 50.0\nhigh = 120.0\n"""
    with pytest.raises(CaseError) as exc:
        parse_case_text(text + table)
    assert exc.value.path == "uncertainty.inputs[0].input" and "co2_price_per_t" in str(exc.value)


def _small_case(tmp_path) -> Path:
    """The demo with two square alternatives left and a short scenario table."""
    keep = """
[[alternatives]]
name = "standard to fuel"
choices = { makeup_grade = "standard", purge_destination = "fuel", recovery = "none" }

[[alternatives]]
name = "purified to fuel"
choices = { makeup_grade = "purified", purge_destination = "fuel", recovery = "none" }
"""
    path = tmp_path / "case.toml"
    path.write_text(DEMO + keep + UNCERTAINTY)
    return path


def test_the_command_writes_the_uncertainty_block(tmp_path, capsys):
    out = tmp_path / "u.json"
    assert main(["scenarios", str(_small_case(tmp_path)), "--json", str(out), "--plots",
                 str(tmp_path / "plots")]) == 0
    doc = json.loads(out.read_text())["uncertainty"]
    assert doc["scenarios"] == doc["scenarios_finished"] == 40 and doc["seed"] == 5
    assert set(doc["alternatives"]) == {"standard to fuel", "purified to fuel"}
    for rec in doc["alternatives"].values():
        assert set(rec["tac_percentiles"]) == set(rec["purge_fraction_percentiles"]) \
            == {"P10", "P50", "P90"}
        assert rec["tac_percentiles"]["P10"] <= rec["tac_percentiles"]["P50"] \
            <= rec["tac_percentiles"]["P90"]
        assert rec["expected_regret"] >= 0.0
    assert sum(r["probability_best"] for r in doc["alternatives"].values()) == pytest.approx(1)
    assert (tmp_path / "plots" / "price_scenarios.png").stat().st_size > 10_000
    assert "best in" in capsys.readouterr().out


def test_the_command_without_a_table_says_where_to_find_one(tmp_path, capsys):
    path = tmp_path / "case.toml"
    path.write_text(DEMO)
    assert main(["scenarios", str(path), "--json", str(tmp_path / "u.json")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("purgeplan: error: uncertainty: ")
    assert not (tmp_path / "u.json").exists()


# ---------------------------------------------------------------------------
# generated tables: accepted, or refused in one line naming the field

_PATHS = ["economics.power_price_per_kwh", "economics.fuel_price_per_gj",
          "economics.discount_rate", "economics.hours_per_year", "economics.co2_price_per_t",
          "economics.compressor_capital.reference_cost", "sources.standard.price_per_kmol",
          "sources.none.price_per_kmol", "economics.power", "loop.pressure_bar", ""]
_NUMBERS = st.one_of(st.floats(allow_nan=True, allow_infinity=True),
                     st.floats(min_value=-1.0, max_value=20.0), st.integers(-5, 10_000))
_ANY = st.one_of(_NUMBERS, st.text(max_size=4), st.booleans(), st.lists(_NUMBERS, max_size=2))


_REQUIRED = {"uniform": ["low", "high"], "triangular": ["low", "mode", "high"],
             "normal": ["mean", "standard_deviation", "low", "high"],
             "lognormal": ["median", "sigma_log", "low", "high"]}


@st.composite
def _tables(draw):
    """Mostly near-valid tables (sorted numbers where an order is needed), some wild."""
    def value(numbers=True):
        return draw(_NUMBERS if numbers and draw(st.integers(0, 4)) else _ANY)
    inputs = []
    for _ in range(draw(st.integers(0, 3)) if draw(st.integers(0, 5)) == 0 else
                   draw(st.integers(1, 3))):
        kind = draw(st.sampled_from([*_REQUIRED, "beta"] if draw(st.integers(0, 5)) == 0
                                    else list(_REQUIRED)))
        path = draw(st.sampled_from(_PATHS if draw(st.integers(0, 4)) == 0 else _PATHS[:7]))
        spec = {"input": path if draw(st.integers(0, 9)) else value(), "distribution": kind}
        if kind in _REQUIRED and draw(st.integers(0, 3)):
            numbers = sorted(draw(st.lists(st.floats(0.0, 30.0), min_size=4, max_size=4)))
            lo, a, b, hi = numbers
            given_values = {"low": lo, "mode": a, "high": hi, "mean": a,
                            "standard_deviation": max(b - a, 1e-3), "median": max(a, 1e-3),
                            "sigma_log": draw(st.floats(0.01, 1.0))}
            spec.update({k: given_values[k] for k in _REQUIRED[kind]})
        for key in draw(st.sets(st.sampled_from(
                ["low", "mode", "high", "mean", "standard_deviation", "median", "sigma_log",
                 "shape"]), max_size=2 if draw(st.integers(0, 3)) == 0 else 0)):
            spec[key] = value()
        inputs.append(spec)
    table = {"scenarios": draw(st.integers(2, 60)) if draw(st.integers(0, 4)) else value(),
             "inputs": inputs}
    if draw(st.booleans()):
        table["seed"] = draw(st.integers(0, 99)) if draw(st.integers(0, 3)) else value()
    if draw(st.booleans()):
        table["sobol_samples"] = draw(st.integers(0, 64)) if draw(st.integers(0, 3)) else value()
    if inputs and draw(st.booleans()):
        names = [i["input"] for i in inputs if isinstance(i["input"], str)] or ["x"]
        table["correlations"] = [{"inputs": draw(st.lists(st.sampled_from(names), max_size=3)),
                                  "rank_correlation": value()}]
    return table


BASE = tomllib.loads(DEMO)


@settings(max_examples=300, deadline=None)
@given(_tables())
def test_generated_uncertainty_tables_are_accepted_or_refused_in_one_line(table):
    raw = {**BASE, "uncertainty": table}
    try:
        case = validate_case_dict(raw)
    except CaseError as exc:
        assert "\n" not in str(exc) and exc.path.startswith("uncertainty")
        event(f"refused at {exc.path.split('.')[-1].split('[')[0]}")
        return
    event("accepted")
    inputs = uncertain_inputs(case)
    values = scenario_values([x.distribution for x in inputs], min(case.uncertainty.scenarios,
                                                                   200), 0)
    for j, x in enumerate(inputs):
        lo, hi = x.distribution.support()
        assert np.isfinite(values[:, j]).all()
        assert (values[:, j] >= lo).all() and (values[:, j] <= hi).all()


def test_optimize_on_two_workers_gives_the_in_process_answers(tmp_path):
    case = Path(__file__).resolve().parents[1] / "cases" / "hydrogenation_demo.toml"
    docs = []
    for jobs in ("1", "2"):
        out = tmp_path / f"o{jobs}.json"
        assert main(["optimize", str(case), "--jobs", jobs, "--json", str(out),
                     "--quiet"]) == 0
        doc = json.loads(out.read_text())
        for alt in doc["alternatives"]:
            alt["solver"].pop("seconds", None)
        docs.append(doc)
    assert docs[0] == docs[1]


def test_the_demo_carries_a_table_that_the_study_runs():
    case = parse_case_text(DEMO_TEXT)
    assert case.uncertainty is not None and case.uncertainty.scenarios >= 10
    assert {x.path for x in uncertain_inputs(case)} >= {"sources.standard.price_per_kmol",
                                                         "economics.power_price_per_kwh"}


def test_the_study_carries_the_scenarios_into_its_workbook_and_json(tmp_path):
    from openpyxl import load_workbook

    from purgeplan.output.uncertainty_out import SHEET

    book, doc = tmp_path / "s.xlsx", tmp_path / "s.json"
    assert main(["study", str(_small_case(tmp_path)), "-o", str(book), "--json", str(doc),
                 "--quiet"]) == 0
    block = json.loads(doc.read_text())["uncertainty"]
    assert block["scenarios"] == 40 and set(block["alternatives"]) == {"standard to fuel",
                                                                       "purified to fuel"}
    ws = load_workbook(book)[SHEET]
    rows = {ws.cell(row=r, column=1).value: [ws.cell(row=r, column=c).value
                                             for c in range(1, 13)]
            for r in range(5, 7)}
    for name, rec in block["alternatives"].items():
        label = next(k for k in rows if k and k.endswith(name))
        assert rows[label][2] == pytest.approx(rec["probability_best"])
        assert rows[label][4] == pytest.approx(rec["tac_percentiles"]["P50"])
        assert rows[label][6] == pytest.approx(rec["expected_regret"])
    assert len(ws._charts) == 2


def test_sobol_indices_of_the_choice_on_the_demo(demo):
    """Through the study's route: the purified price moves the standard-versus-purified choice."""
    case, loops = demo
    chosen = [(n, lp) for n, lp in _square(loops) if "recovery=none" in n
              and "purge_destination=fuel" in n]
    with_sobol = case.model_copy(update={"uncertainty": case.uncertainty.model_copy(
        update={"sobol_samples": 64})})
    result = run_uncertainty(with_sobol, chosen)
    s = result.sobol
    assert s.names == result.inputs and s.evaluations == 64 * (len(result.inputs) + 2)
    assert all(math.isfinite(v) for v in s.first + s.total)
    by_name = dict(zip(s.names, s.total, strict=True))
    # the two make-up prices carry the choice between the two grades; power hardly
    assert max(by_name, key=by_name.get).startswith("sources.")
    assert by_name["economics.power_price_per_kwh"] < 0.2


def test_checking_an_uncertainty_table_imports_no_scipy():
    """Validation alone stays light: the distributions' supports need no SciPy."""
    import subprocess
    import sys

    demo = Path(__file__).resolve().parents[1] / "cases" / "ammonia_demo.toml"
    code = ("import sys; from purgeplan.case import load_case; "
            f"case, _ = load_case({str(demo)!r}); assert case.uncertainty is not None; "
            "print(sorted(m for m in sys.modules if m.split('.')[0] == 'scipy'))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == "[]"
