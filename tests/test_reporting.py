"""Every per-alternative result is reported in the terminal, the JSON and the workbook.

The terminal lines come from the installed ``purgeplan`` command run on the
ammonia demo case, checked against the JSON it writes in the same run; the
workbook rows come from a small study of the demo case (two alternatives),
checked against :func:`purgeplan.output.json_out.study_document` of that
study.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from purgeplan.case import parse_case_text
from purgeplan.output import workbook
from purgeplan.output.json_out import study_document
from purgeplan.output.workbook import build_workbook
from purgeplan.study import run_study

DEMO = Path(__file__).resolve().parents[1] / "cases" / "ammonia_demo.toml"
#: The standard grade with a membrane: the blend cannot hold H2/N2, so it warns.
UNHELD = "standard, fuel, membrane"
#: A blend: the nitrogen source holds H2/N2 at 3.
HELD = "blend, fuel, membrane"


def _command() -> list[str]:
    found = shutil.which("purgeplan")
    return [found] if found else [sys.executable, "-m", "purgeplan"]


def _optimize(alternative: str, tmp_path: Path) -> tuple[list[str], dict]:
    """The report lines and the JSON record of one alternative's optimum."""
    out = tmp_path / "result.json"
    done = subprocess.run([*_command(), "optimize", str(DEMO), "--alternative", alternative,
                           "--json", str(out)], capture_output=True, text=True, timeout=300,
                          check=False, env={**os.environ, "COLUMNS": "250"})
    assert done.returncode == 0, done.stdout + done.stderr
    (record,) = json.loads(out.read_text(encoding="utf-8"))["alternatives"]
    return done.stdout.splitlines(), record


def _hours(value) -> str:
    return "never (settles below the limit)" if value is None else f"{value:,.1f} h"


def test_optimize_prints_the_warning_the_unheld_ratio_and_the_hours(tmp_path):
    lines, record = _optimize(UNHELD, tmp_path)
    assert record["warnings"], "the standard grade with a membrane should warn about H2/N2"
    for warning in record["warnings"]:
        assert f"  warning: {warning}" in lines
    ratio = record["inlet_ratio"]["H2/N2"]
    assert f"  inlet ratio H2/N2 {ratio:.3f} (not held)" in lines
    hours = record["time_to_inert_limit_h"]
    shown = {k: None if k in hours["never_reached"] else hours[k]
             for k in ("purge_closed", "recovery_down")}
    assert (f"  hours to the inert limit: purge closed {_hours(shown['purge_closed'])}; "
            f"recovery unit down: {_hours(shown['recovery_down'])}") in lines


def test_optimize_prints_never_where_the_inerts_settle_below_the_limit(tmp_path):
    """The purified grade with a membrane: its dissolved and let-down gas carry the inerts
    out even with the purge closed, so neither event reaches the limit."""
    lines, record = _optimize("purified, fuel, membrane", tmp_path)
    assert record["time_to_inert_limit_h"]["never_reached"] == ["purge_closed", "recovery_down"]
    assert ("  hours to the inert limit: purge closed never (settles below the limit); "
            "recovery unit down: never (settles below the limit)") in lines


def test_optimize_prints_a_held_ratio_and_no_warning(tmp_path):
    lines, record = _optimize(HELD, tmp_path)
    assert record["warnings"] == []
    assert not [line for line in lines if "warning:" in line]
    assert record["inlet_ratio"]["H2/N2"] == pytest.approx(3.0, rel=1e-6)
    assert "  inlet ratio H2/N2 3.000 (held between 3 and 3)" in lines
    hours = record["time_to_inert_limit_h"]
    assert hours["purge_closed"] is not None and hours["purge_closed"] > 0
    assert any(line.startswith("  hours to the inert limit: purge closed "
                               f"{_hours(hours['purge_closed'])}") for line in lines)


def test_check_prints_each_alternatives_warnings(tmp_path):
    done = subprocess.run([*_command(), "check", str(DEMO)], capture_output=True, text=True,
                          timeout=300, check=False, env={**os.environ, "COLUMNS": "250"})
    assert done.returncode == 0, done.stdout + done.stderr
    lines = done.stdout.splitlines()
    warned = [line for line in lines
              if line.startswith("     warning: reactor-inlet ratio 'H2/N2'")]
    assert warned, "the standard and purified grades cannot hold H2/N2 at the present purge"
    assert "     inlet ratio H2/N2 3.000 (held between 3 and 3)" in lines


@pytest.fixture(scope="module")
def small_study():
    """The demo study cut to one unheld and one held alternative."""
    text = DEMO.read_text(encoding="utf-8") + f"""
[[alternatives]]
name = "{UNHELD}"
choices = {{ makeup_grade = "standard", purge_destination = "fuel", recovery = "membrane" }}
[[alternatives]]
name = "{HELD}"
choices = {{ makeup_grade = "blend", purge_destination = "fuel", recovery = "membrane" }}
"""
    sha = hashlib.sha256(text.encode("utf-8")).hexdigest()
    result = run_study(parse_case_text(text), sha, sensitivity_alternatives=1)
    return result, build_workbook(result), study_document(result)


def _blocks(wb) -> dict[str, dict[str, tuple]]:
    """Cost build-up rows by alternative name, then by item: (quantity, unit, note)."""
    out: dict[str, dict[str, tuple]] = {}
    current = None
    for item, _kind, qty, unit, _cost, _qty_now, _cost_now, note in wb[workbook.COSTS].iter_rows(
            min_row=3, max_col=8, values_only=True):
        if isinstance(item, str) and (m := re.match(r"Option key: (.*)$", item)):
            current = out.setdefault(m.group(1), {})
        elif current is not None and isinstance(item, str):
            current[item] = (qty, unit, note)
    return out


def test_the_workbook_holds_the_jsons_ratios_warnings_and_hours(small_study):
    _result, wb, doc = small_study
    blocks = _blocks(wb)
    records = {r["name"]: r for r in doc["alternatives"]}
    assert set(records) == {UNHELD, HELD} == set(blocks)
    for name, record in records.items():
        rows = blocks[name]
        for ratio, value in record["inlet_ratio"].items():
            qty, unit, _note = rows[f"Reactor-inlet ratio {ratio}"]
            assert qty == pytest.approx(value, rel=1e-12) and unit == "-"
        hours = record["time_to_inert_limit_h"]
        for key, label in (("purge_closed", "purge closed"),
                           ("recovery_down", "recovery unit down")):
            qty, unit, _note = rows[f"Hours to the inert limit, {label}"]
            assert unit == "h"
            if key in hours["never_reached"]:
                assert qty == "never"
            else:
                assert math.isfinite(hours[key]) and qty == pytest.approx(hours[key], rel=1e-12)
        warnings = rows["Warnings"][0]
        assert warnings == ("; ".join(record["warnings"]) or "none")
    assert blocks[UNHELD]["Reactor-inlet ratio H2/N2"][2] == "not held"
    assert blocks[HELD]["Reactor-inlet ratio H2/N2"][2] == "held between 3 and 3"
    assert records[UNHELD]["warnings"]


def test_optimize_says_when_the_hours_to_the_inert_limit_do_not_apply(tmp_path):
    done = subprocess.run([*_command(), "optimize", str(DEMO.with_name("hydrogenation_demo.toml")),
                           "--alternative", "1", "--json", str(tmp_path / "r.json")],
                          capture_output=True, text=True, timeout=300, check=False,
                          env={**os.environ, "COLUMNS": "250"})
    assert done.returncode == 0, done.stdout + done.stderr
    (record,) = json.loads((tmp_path / "r.json").read_text(encoding="utf-8"))["alternatives"]
    assert record["time_to_inert_limit_h"] == {"purge_closed": None, "recovery_down": None,
                                               "never_reached": []}
    assert ("  hours to the inert limit: n/a (needs a loop gas inventory, an inert limit and "
            "inerts in the feed)") in done.stdout.splitlines()
    assert "  inlet ratio H2/benzene 8.000 (fixed at 8 by the direct feed rate)" in \
        done.stdout.splitlines()
