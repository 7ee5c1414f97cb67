"""The command line as a user meets it.

Bad input: exit status 2 and exactly one line on stderr naming the key path,
the value found (where there is one) and what was expected; no traceback;
nothing written.  Valid cases: `check` summarises, `optimize` and `evaluate`
write the JSON contract, an infeasible alternative gives exit status 3 with
its reason while the others are still reported.

Subprocess runs (``python -m purgeplan``) check what a user really sees,
tracebacks included; in-process runs of ``purgeplan.cli.main`` are used where
only the result matters.  The bad-input subprocesses run concurrently.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import re
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import pytest

import purgeplan
from purgeplan.case import expand_alternatives, load_case
from purgeplan.cautions import CAUTION
from purgeplan.cli import main

ROOT = Path(__file__).resolve().parents[1]
CASES = {"ammonia": ROOT / "cases" / "ammonia_demo.toml",
         "hydrogenation": ROOT / "cases" / "hydrogenation_demo.toml"}
TEXT = {name: path.read_text(encoding="utf-8") for name, path in CASES.items()}
ALTERNATIVE = {"ammonia": "makeup_grade=standard, purge_destination=fuel, recovery=none",
               "hydrogenation": "hydrogen_grade=reformer, loop_pressure=low"}

STREAMS = ("makeup", "reactor_feed", "reactor_outlet", "liquid_product", "separator_vapour",
           "purge", "recycle")
RECORD_KEYS = ("name", "feasible", "purge_fraction", "inert_fraction_reactor_inlet",
               "per_pass_conversion", "overall_conversion", "tac_per_year",
               "cost_per_tonne_product", "costs", "reactions", "streams", "binding_constraints",
               "curve", "solver")
SOLVER_KEYS = ("name", "status", "solves", "seconds", "method")


@pytest.fixture(autouse=True)
def wide_terminal(monkeypatch):
    """A terminal 200 columns wide, so that no report line wraps."""
    monkeypatch.setenv("COLUMNS", "200")


def run_cli(*args, timeout: float = 300) -> subprocess.CompletedProcess:
    """``python -m purgeplan ARGS`` with text output captured, 200 columns wide."""
    return subprocess.run([sys.executable, "-m", "purgeplan", *map(str, args)],
                          capture_output=True, text=True, timeout=timeout,
                          env={**os.environ, "COLUMNS": "200"})


def stderr_lines(err: str) -> list[str]:
    return err.rstrip("\n").split("\n") if err else []


def edited(seed: str, *edits: tuple[str, str]) -> str:
    """A demo case with each (old, new) text edit applied; old must occur exactly once."""
    text = TEXT[seed]
    for old, new in edits:
        assert text.count(old) == 1, f"{old!r} must occur once in the {seed} demo"
        text = text.replace(old, new)
    return text


def line_of(seed: str, fragment: str) -> int:
    """1-based line number of the line that contains fragment in a demo case."""
    return next(i for i, line in enumerate(TEXT[seed].splitlines(), 1) if fragment in line)


# ---------------------------------------------------------------------------
# bad input


@dataclass(frozen=True)
class Bad:
    """A bad case: the edits to a demo and the fragments its one-line message must hold."""

    seed: str
    edits: tuple[tuple[str, str], ...]
    expect: tuple[str, ...]

    @property
    def text(self) -> str:
        return edited(self.seed, *self.edits)


def bad(id_, seed, edits, *expect):
    return pytest.param(Bad(seed, tuple(edits), expect), id=id_)


BAD_INPUTS = [
    # malformed TOML: the message gives the file, the problem and its line
    bad("malformed-toml", "ammonia", [("pressure_bar = 160", "pressure_bar = = 160")],
        "is not valid TOML", "Invalid value", f"line {line_of('ammonia', 'pressure_bar = 160')}"),
    bad("duplicate-key", "ammonia",
        [("pressure_bar = 160", "pressure_bar = 160\npressure_bar = 1")],
        "is not valid TOML", f"line {line_of('ammonia', 'pressure_bar = 160') + 1}"),
    bad("unterminated-string", "hydrogenation",
        [('product = "cyclohexane"', 'product = "cyclohexane')], "is not valid TOML",
        f"line {line_of('hydrogenation', 'product = ')}"),
    # unknown keys, with a did-you-mean
    bad("unknown-key", "ammonia", [("purge_fraction = 0.03 ", "purge_fractions = 0.03 ")],
        "loop.purge_fractions", "unknown key", "did you mean 'purge_fraction'"),
    bad("unknown-table", "ammonia", [("[compression]", "[compresion]")],
        "compresion", "unknown key", "did you mean 'compression'"),
    bad("unknown-table-for-required", "ammonia", [("[separator]", "[seperator]")],
        "seperator", "unknown key", "did you mean 'separator'"),
    bad("unknown-key-for-required", "ammonia", [("pressure_bar = 160", "pressure_bars = 160")],
        "loop.pressure_bars", "unknown key", "did you mean 'pressure_bar'"),
    bad("unknown-key-in-reaction", "ammonia",
        [("approach_to_equilibrium = 0.8", "approach_to_equilibrum = 0.8")],
        "reactions[0].approach_to_equilibrum", "unknown key",
        "did you mean 'approach_to_equilibrium'"),
    bad("unknown-key-in-component", "ammonia", [("H2 = {}", 'H2 = { identifer = "hydrogen" }')],
        "components.H2.identifer", "unknown key", "did you mean 'identifier'"),
    # a missing key
    bad("missing-key", "ammonia", [("pressure_bar = 160\n", "")],
        "loop.pressure_bar", "missing key"),
    bad("missing-key-economics", "hydrogenation", [("power_price_per_kwh = 0.09\n", "")],
        "economics.power_price_per_kwh", "missing key"),
    bad("missing-table", "hydrogenation", [("[reactor]\ntemperature_c = 220\n"
                                            "space_velocity_per_h = 3000\n", "")],
        "reactor", "missing key"),
    # a wrong unit: the key is unknown and the right one is suggested
    bad("wrong-unit", "ammonia", [("pressure_bar = 160", "pressure_psi = 160")],
        "loop.pressure_psi", "unknown key", "did you mean 'pressure_bar'"),
    bad("wrong-unit-optional-key", "ammonia", [("production_t_d = 1200", "production_kg_h = 1200")],
        "loop.production_kg_h", "unknown key", "did you mean 'production_t_d'"),
    bad("wrong-unit-compression", "ammonia", [("recycle_inlet_temperature_c = 30",
                                               "recycle_inlet_temperature_k = 303")],
        "compression.recycle_inlet_temperature_k", "unknown key",
        "did you mean 'recycle_inlet_temperature_c'"),
    bad("wrong-unit-in-source", "hydrogenation",
        [("supply_pressure_bar = 20", "supply_pressure_psi = 290")],
        "sources.reformer_hydrogen.supply_pressure_psi", "unknown key",
        "did you mean 'supply_pressure_bar'"),
    # a missing unit
    bad("missing-unit", "ammonia", [("pressure_bar = 160", "pressure = 160")],
        "loop.pressure", "unknown key", "did you mean 'pressure_bar'"),
    bad("missing-unit-optional-key", "hydrogenation",
        [("space_velocity_per_h = 3000", "space_velocity = 3000")],
        "reactor.space_velocity", "unknown key", "did you mean 'space_velocity_per_h'"),
    bad("missing-unit-in-source", "hydrogenation",
        [("price_per_kmol = 70.0\n", "price_per_kmol = 70.0\ntemperature = 40\n")],
        "sources.benzene_feed.temperature", "unknown key", "did you mean 'temperature_c'"),
    # negative and zero flows
    bad("negative-supply-limit", "ammonia",
        [("price_per_kmol = 2.30\nsupply_pressure_bar = 28\n",
          "price_per_kmol = 2.30\nsupply_pressure_bar = 28\nsupply_limit_kmol_h = -5\n")],
        "sources.standard.supply_limit_kmol_h = -5:", "must be at least 1e-09"),
    bad("negative-production", "ammonia", [("production_t_d = 1200", "production_t_d = -1")],
        "loop.production_t_d = -1:", "must be at least 0.001"),
    bad("zero-production", "hydrogenation", [("production_t_d = 300", "production_t_d = 0")],
        "loop.production_t_d = 0:", "must be at least 0.001"),
    bad("negative-makeup", "ammonia", [('basis = "production"', 'basis = "makeup"'),
                                       ("production_t_d = 1200", "makeup_kmol_h = -5.5")],
        "loop.makeup_kmol_h = -5.5:", "must be at least 0.001"),
    # mole fractions that do not sum to one within 1e-6
    bad("fractions-sum-above-one", "ammonia", [("CH4 = 0.011 }", "CH4 = 0.0111 }")],
        "sources.standard.composition", "1.0001", "must sum to 1 within 1e-6"),
    bad("fractions-sum-just-above", "ammonia", [("CH4 = 0.011 }", "CH4 = 0.011002 }")],
        "sources.standard.composition", "1.000002", "must sum to 1 within 1e-6"),
    bad("fractions-sum-below-one", "ammonia", [("H2 = 0.7485,", "H2 = 0.7,")],
        "sources.purified.composition", "0.9515", "must sum to 1 within 1e-6"),
    bad("fraction-above-one", "hydrogenation",
        [("H2 = 0.97, CH4 = 0.03", "H2 = 1.03, CH4 = -0.03")],
        "sources.reformer_hydrogen.composition.H2 = 1.03:", "must be at most 1"),
    # unknown components
    bad("unknown-component-in-composition", "ammonia",
        [("CH4 = 0.011 }", "CH4 = 0.011, Xe = 0.0 }")],
        "sources.standard.composition.Xe", "'Xe'", "unknown component", "declared components"),
    bad("unknown-component-in-reaction", "ammonia", [("NH3 = 2 }", "NH4 = 2 }")],
        "reactions[0].stoichiometry.NH4", "'NH4'", "unknown component", "did you mean 'NH3'"),
    bad("unknown-identifier", "ammonia",
        [("CH4 = {}", 'CH4 = { identifier = "unobtainium-42" }')],
        "components.CH4", "'unobtainium-42'", "unknown component", "identifier"),
    bad("unknown-component-name", "hydrogenation",
        [("CH4 = {}\n", "CH4 = {}\nunobtainium-42 = {}\n")],
        "components.unobtainium-42", "'unobtainium-42'", "unknown component"),
    # reactions that do not balance their elements
    bad("unbalanced-ammonia", "ammonia", [("NH3 = 2 }", "NH3 = 1 }")],
        "reactions[0].stoichiometry", "does not balance its elements", "'N'"),
    bad("unbalanced-hydrogenation", "hydrogenation", [("H2 = -3,", "H2 = -2,")],
        "reactions[0].stoichiometry", "does not balance its elements", "'H': 2"),
    # per-pass conversion outside (0, 1)
    *[bad(f"conversion-{value}", "hydrogenation",
          [("per_pass_conversion = 0.96", f"per_pass_conversion = {value}")],
          f"reactions[0].per_pass_conversion = {value}:", expected)
      for value, expected in (("0", "must be greater than 0"), ("1", "must be less than 1"),
                              ("1.5", "must be less than 1"),
                              ("-0.1", "must be greater than 0"))],
    bad("conversion-nan", "hydrogenation",
        [("per_pass_conversion = 0.96", "per_pass_conversion = nan")],
        "reactions[0].per_pass_conversion = nan:", "finite number"),
    bad("approach-above-one", "ammonia",
        [("approach_to_equilibrium = 0.8", "approach_to_equilibrium = 1.5")],
        "reactions[0].approach_to_equilibrium = 1.5:", "must be at most 1"),
    bad("wrong-type", "ammonia", [("pressure_bar = 160", 'pressure_bar = "160 bar"')],
        "loop.pressure_bar", "'160 bar'", "valid number"),
]


@pytest.fixture(scope="module")
def bad_runs(tmp_path_factory):
    """`purgeplan check` on every bad case, as subprocesses run side by side."""
    folder = tmp_path_factory.mktemp("bad_cases")
    paths = {}
    for param in BAD_INPUTS:
        case = param.values[0]
        path = folder / f"{param.id}.toml"
        path.write_text(case.text, encoding="utf-8")
        paths[param.id] = path
    with ThreadPoolExecutor(max_workers=max(2, os.cpu_count() or 1)) as pool:
        futures = {name: pool.submit(run_cli, "check", path) for name, path in paths.items()}
        return {name: (paths[name], f.result()) for name, f in futures.items()}


@pytest.mark.parametrize("case", BAD_INPUTS)
def test_bad_input_gives_one_line_naming_the_key(case, request, bad_runs, tmp_path, capsys):
    path, proc = bad_runs[request.node.callspec.id]
    assert "Traceback" not in proc.stdout + proc.stderr
    assert proc.returncode == 2, proc.stderr
    lines = stderr_lines(proc.stderr)
    assert len(lines) == 1, proc.stderr
    message = lines[0]
    assert message.startswith("purgeplan: error: ")
    for fragment in case.expect:
        assert fragment in message, f"{fragment!r} not in {message!r}"
    assert "case is valid" not in proc.stdout

    # the same message from optimize and evaluate, and no JSON is written
    target = tmp_path / "result.json"
    for argv in (["optimize", str(path), "--alternative", ALTERNATIVE[case.seed]],
                 ["evaluate", str(path), "--alternative", ALTERNATIVE[case.seed],
                  "--purge-fraction", "0.05"]):
        status = main([*argv, "--json", str(target)])
        out, err = capsys.readouterr()
        assert status == 2
        assert stderr_lines(err) == [message]
        assert not target.exists()
    assert list(tmp_path.iterdir()) == []


def test_bad_input_leaves_an_existing_json_file_alone(tmp_path, capsys):
    case = tmp_path / "case.toml"
    case.write_text(edited("ammonia", ("production_t_d = 1200", "production_t_d = -1")))
    target = tmp_path / "result.json"
    target.write_text('{"old": true}\n')
    assert main(["optimize", str(case), "--alternative", ALTERNATIVE["ammonia"],
                 "--json", str(target)]) == 2
    assert target.read_text() == '{"old": true}\n'
    assert sorted(p.name for p in tmp_path.iterdir()) == ["case.toml", "result.json"]
    assert len(stderr_lines(capsys.readouterr().err)) == 1


def test_fractions_within_tolerance_are_accepted(tmp_path, capsys):
    case = tmp_path / "case.toml"
    case.write_text(edited("ammonia", ("CH4 = 0.011 }", "CH4 = 0.0110005 }")))
    assert main(["check", str(case)]) == 0
    assert "case is valid" in capsys.readouterr().out


def test_missing_case_file(tmp_path):
    proc = run_cli("check", tmp_path / "nowhere.toml")
    assert proc.returncode == 2
    assert len(stderr_lines(proc.stderr)) == 1
    assert "nowhere.toml" in proc.stderr and "Traceback" not in proc.stderr


@pytest.mark.parametrize("argv, fragment", [
    (["--purge-fraction", "0.05"], "--alternative"),
    (["--alternative", ALTERNATIVE["hydrogenation"], "--purge-fraction", "1.5"],
     "--purge-fraction"),
    (["--alternative", ALTERNATIVE["hydrogenation"], "--purge-fraction", "0"],
     "--purge-fraction"),
    (["--alternative", "hydrogen_grade=reformr, loop_pressure=low", "--purge-fraction", "0.05"],
     "did you mean 'hydrogen_grade=reformer, loop_pressure=low'"),
])
def test_evaluate_refuses_bad_arguments(argv, fragment, tmp_path, capsys):
    target = tmp_path / "result.json"
    status = main(["evaluate", str(CASES["hydrogenation"]), *argv, "--json", str(target)])
    err = capsys.readouterr().err
    assert status == 2
    assert len(stderr_lines(err)) == 1 and fragment in err
    assert not target.exists()


# ---------------------------------------------------------------------------
# check, new, --help


@pytest.mark.parametrize("seed", sorted(CASES))
def test_check_accepts_the_demo_cases(seed):
    proc = run_cli("check", CASES[seed])
    assert proc.returncode == 0, proc.stderr
    assert proc.stderr == ""
    assert "case is valid" in proc.stdout
    digest = hashlib.sha256(CASES[seed].read_bytes()).hexdigest()
    assert digest[:12] in proc.stdout


def check_blocks(out: str) -> list[list[str]]:
    """The report of each alternative in `check`'s output: its number line and the rest."""
    blocks: list[list[str]] = []
    for line in out.splitlines():
        if line.startswith("case is valid"):
            break
        if re.match(r"^ {0,2}\d+  ", line):
            blocks.append([line])
        elif blocks:
            blocks[-1].append(line)
    return blocks


def test_check_reports_each_state_limit_against_the_steady_state(tmp_path, capsys):
    """The ammonia demo's inert limit 0.25, then 0.005: met at the case purge, then not.

    The value beside each limit is the inert mole fraction at the reactor inlet
    that the same alternative's report gives in per cent.
    """
    count = len(expand_alternatives(load_case(CASES["ammonia"])[0]))
    for bound, verdict in (("0.25", "met"), ("0.005", "not met")):
        case = tmp_path / f"limit-{bound}.toml"
        case.write_text(edited("ammonia", ("max_inert_fraction_reactor_inlet = 0.25",
                                           f"max_inert_fraction_reactor_inlet = {bound}")))
        assert main(["check", str(case)]) == 0
        blocks = check_blocks(capsys.readouterr().out)
        assert len(blocks) == count
        for block in blocks:
            text = "\n".join(block)
            inert = float(text.split("inert at the reactor inlet ")[1].split(" %")[0]) / 100
            head = f"     {verdict}: the inert limit at the reactor inlet ({bound}) against "
            (line,) = [line for line in block if line.startswith(head)]
            assert float(line[len(head):]) == pytest.approx(inert, abs=6e-5)


def test_check_says_when_no_state_limit_is_set(capsys):
    assert main(["check", str(CASES["hydrogenation"])]) == 0
    out = capsys.readouterr().out
    count = len(expand_alternatives(load_case(CASES["hydrogenation"])[0]))
    assert out.count("     no state limits set") == count
    assert out.count("inert at the reactor inlet ") == count


def test_new_writes_a_template_that_check_accepts(tmp_path):
    target = tmp_path / "my_case.toml"
    proc = run_cli("new", target)
    assert proc.returncode == 0, proc.stderr
    assert target.exists()
    text = target.read_bytes()
    check = run_cli("check", target)
    assert check.returncode == 0, check.stderr
    assert "case is valid" in check.stdout

    again = run_cli("new", target)
    assert again.returncode == 2
    assert len(stderr_lines(again.stderr)) == 1
    assert "exists" in again.stderr and "Traceback" not in again.stderr
    assert target.read_bytes() == text
    assert sorted(p.name for p in tmp_path.iterdir()) == ["my_case.toml"]


def test_new_refuses_a_missing_folder(tmp_path, capsys):
    target = tmp_path / "no_such_folder" / "case.toml"
    assert main(["new", str(target)]) == 2
    assert len(stderr_lines(capsys.readouterr().err)) == 1
    assert not target.parent.exists()


def test_help_states_the_cautions():
    proc = run_cli("--help")
    assert proc.returncode == 0
    text = " ".join(proc.stdout.split()).lower()
    for word in ("flammable", "toxic", "high pressure", "local codes"):
        assert word in text, word
    for command in ("check", "new", "evaluate", "optimize", "study"):
        assert command in text
    assert " ".join(CAUTION.split()).lower() in text


# ---------------------------------------------------------------------------
# the JSON contract


def _number(x) -> bool:
    return isinstance(x, int | float) and not isinstance(x, bool) and math.isfinite(x)


def assert_document(doc: dict, case_path: Path, count: int) -> None:
    assert set(doc) >= {"tool_version", "case_sha256", "alternatives"}
    assert doc["tool_version"] == purgeplan.__version__
    assert doc["case_sha256"] == hashlib.sha256(case_path.read_bytes()).hexdigest()
    assert isinstance(doc["alternatives"], list) and len(doc["alternatives"]) == count
    for rec in doc["alternatives"]:
        missing = [k for k in RECORD_KEYS if k not in rec]
        assert not missing, missing
        assert set(rec["solver"]) >= set(SOLVER_KEYS)
        assert isinstance(rec["binding_constraints"], list)
        assert isinstance(rec["curve"], list)


def assert_feasible_record(rec: dict) -> None:
    assert rec["feasible"] is True
    for key in ("purge_fraction", "inert_fraction_reactor_inlet", "per_pass_conversion",
                "overall_conversion", "tac_per_year", "cost_per_tonne_product"):
        assert _number(rec[key]), key
    assert 0 < rec["purge_fraction"] < 1
    assert 0 <= rec["inert_fraction_reactor_inlet"] < 1
    assert 0 < rec["per_pass_conversion"] < 1
    assert 0 < rec["overall_conversion"] <= 1
    assert rec["costs"] and all(_number(v) for v in rec["costs"].values())
    assert sum(rec["costs"].values()) == pytest.approx(rec["tac_per_year"], rel=1e-9)
    assert rec["reactions"]
    for r in rec["reactions"]:
        assert r["stoichiometry"] and all(_number(v) for v in r["stoichiometry"].values())
        assert _number(r["extent_kmol_h"]) and r["extent_kmol_h"] > 0
    streams = rec["streams"]
    assert set(streams) >= set(STREAMS), sorted(streams)
    a = rec["purge_fraction"]
    for c, vapour in streams["separator_vapour"].items():
        assert streams["purge"][c] == pytest.approx(a * vapour, rel=1e-9, abs=1e-9)
        assert streams["purge"][c] + streams["recycle"][c] == pytest.approx(vapour, rel=1e-9,
                                                                             abs=1e-9)
    for point in rec["curve"]:
        assert set(point) >= {"purge_fraction", "tac_per_year"}
        assert _number(point["purge_fraction"]) and _number(point["tac_per_year"])
    solver = rec["solver"]
    assert isinstance(solver["name"], str) and solver["name"]
    assert isinstance(solver["solves"], int) and solver["solves"] >= 1
    assert _number(solver["seconds"]) and solver["seconds"] >= 0


def test_optimize_one_alternative_writes_the_json_contract(tmp_path):
    target = tmp_path / "result.json"
    proc = run_cli("optimize", CASES["ammonia"], "--alternative", ALTERNATIVE["ammonia"],
                   "--json", target)
    assert proc.returncode == 0, proc.stderr
    assert "Traceback" not in proc.stderr
    doc = json.loads(target.read_text())
    assert_document(doc, CASES["ammonia"], 1)
    rec = doc["alternatives"][0]
    assert rec["name"] == ALTERNATIVE["ammonia"]
    assert_feasible_record(rec)
    assert rec["curve"], "optimize reports the cost curve around the optimum"
    best = min(p["tac_per_year"] for p in rec["curve"])
    assert rec["tac_per_year"] <= best * (1 + 1e-9)
    assert "standard, fuel, none" in proc.stdout  # the table gives the alternative's label
    assert sorted(p.name for p in tmp_path.iterdir()) == ["result.json"]


def test_evaluate_writes_the_same_shape_with_one_entry(tmp_path):
    target = tmp_path / "result.json"
    proc = run_cli("evaluate", CASES["hydrogenation"], "--alternative",
                   ALTERNATIVE["hydrogenation"], "--purge-fraction", "0.05", "--json", target)
    assert proc.returncode == 0, proc.stderr
    doc = json.loads(target.read_text())
    assert_document(doc, CASES["hydrogenation"], 1)
    rec = doc["alternatives"][0]
    assert rec["name"] == ALTERNATIVE["hydrogenation"]
    assert_feasible_record(rec)
    assert rec["purge_fraction"] == pytest.approx(0.05, rel=1e-12)


#: The ammonia demo reduced to its two make-up grades.
TWO_GRADES = """
[[alternatives]]
name = "standard grade"
choices = { makeup_grade = "standard" }

[[alternatives]]
name = "purified grade"
choices = { makeup_grade = "purified" }
"""

INFEASIBLE = edited(
    "ammonia",
    ("max_inert_fraction_reactor_inlet = 0.25", "max_inert_fraction_reactor_inlet = 0.005"),
) + TWO_GRADES


def test_infeasible_alternative_gives_exit_3_and_the_reason(tmp_path):
    case = tmp_path / "case.toml"
    case.write_text(INFEASIBLE)
    target = tmp_path / "result.json"
    proc = run_cli("optimize", case, "--json", target)
    assert proc.returncode == 3, proc.stdout + proc.stderr
    assert "Traceback" not in proc.stdout + proc.stderr
    assert len(stderr_lines(proc.stderr)) <= 1
    # the reason, on the table row of the infeasible alternative
    row = next(line for line in proc.stdout.splitlines() if "standard grade" in line)
    assert "INFEASIBLE" in row and "inert" in row and "0.005" in row
    assert "purified grade" in proc.stdout  # the other alternative is still reported

    doc = json.loads(target.read_text())
    assert_document(doc, case, 2)
    by_name = {rec["name"]: rec for rec in doc["alternatives"]}
    assert set(by_name) == {"standard grade", "purified grade"}
    standard = by_name["standard grade"]
    assert standard["feasible"] is False
    assert "inert" in standard["message"] and standard["purge_fraction"] is None
    assert_feasible_record(by_name["purified grade"])
    assert by_name["purified grade"]["inert_fraction_reactor_inlet"] <= 0.005 * (1 + 1e-6)


def test_study_ends_with_the_caution_and_writes_the_records(tmp_path, capsys):
    """Two alternatives of the ammonia demo: workbook, JSON and the caution on stderr."""
    case = tmp_path / "case.toml"
    case.write_text(TEXT["ammonia"] + TWO_GRADES)
    out, target = tmp_path / "study.xlsx", tmp_path / "study.json"
    assert main(["study", str(case), "-o", str(out), "--json", str(target), "--quiet"]) == 0
    captured = capsys.readouterr()
    assert captured.err.rstrip("\n").split("\n")[-1] == CAUTION
    doc = json.loads(target.read_text())
    assert_document(doc, case, 2)
    assert doc["ranking"] == [r["name"] for r in sorted(
        doc["alternatives"], key=lambda r: r["tac_per_year"])]
    (be,) = doc["break_even"]
    assert (be["grade"], be["base_grade"]) == ("purified", "standard")
    assert ("break-even: purified ties with standard at a premium of "
            f"{be['premium_per_kmol']:.4f}") in captured.out
    assert out.exists()


def test_optimize_json_carries_the_codes_and_labels_the_study_gives(tmp_path):
    """`optimize` names alternatives as `study` does, also for one picked by its code."""
    case = Path(__file__).resolve().parents[1] / "cases" / "hydrogenation_demo.toml"
    study, out = tmp_path / "s.json", tmp_path / "o.json"
    assert main(["study", str(case), "-o", str(tmp_path / "s.xlsx"), "--json", str(study),
                 "--quiet"]) == 0
    named = {a["name"]: (a["code"], a["label"])
             for a in json.loads(study.read_text())["alternatives"]}
    assert main(["optimize", str(case), "--json", str(out), "--quiet"]) == 0
    assert {a["name"]: (a["code"], a["label"])
            for a in json.loads(out.read_text())["alternatives"]} == named
    assert main(["optimize", str(case), "--alternative", "A3", "--json", str(out),
                 "--quiet"]) == 0
    (one,) = json.loads(out.read_text())["alternatives"]
    assert one["code"] == "A3" and (one["code"], one["label"]) == named[one["name"]]
