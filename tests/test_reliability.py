"""Nothing lost: killed runs, failed saves and solver faults leave earlier work intact.

Also: extreme but valid cases converge or are reported clearly, and case files
are data only.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import textwrap
import time
import tomllib
from pathlib import Path

import pytest

from purgeplan import build_loop
from purgeplan.case import validate_case_dict
from purgeplan.cli import main
from purgeplan.engine import steady_state
from purgeplan.errors import NoSteadyStateError
from purgeplan.reduced_space import LoopLP
from purgeplan.solve import Status, optimise

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "cases" / "ammonia_demo.toml"

SMALL = """
[[alternatives]]
name = "fuel"
choices = { makeup_grade = "standard", purge_destination = "fuel", recovery = "none" }
[[alternatives]]
name = "flare"
choices = { makeup_grade = "standard", purge_destination = "flare", recovery = "none" }
"""


@pytest.fixture()
def small_case(tmp_path):
    path = tmp_path / "small.toml"
    path.write_text(DEMO.read_text(encoding="utf-8") + SMALL, encoding="utf-8")
    return path


def _existing(tmp_path):
    """Earlier outputs with known bytes, and a snapshot of the folder."""
    out, js = tmp_path / "out.xlsx", tmp_path / "out.json"
    out.write_bytes(b"earlier workbook bytes")
    js.write_bytes(b'{"earlier": true}\n')
    return out, js


def _snapshot(folder):
    return {p.name: p.read_bytes() for p in folder.iterdir() if p.is_file()}


KILLER = textwrap.dedent("""
    import sys, time
    from pathlib import Path
    import purgeplan.output.workbook as workbook
    ready = Path(sys.argv[1])

    def slow_save(wb, target):  # half the bytes in the file the writer was given, then stall
        Path(target).write_bytes(b"half a workbook")
        ready.write_text("writing")
        time.sleep(120)

    workbook.save_with_results = slow_save
    from purgeplan.cli import main
    sys.exit(main(sys.argv[2:]))
""")


@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGINT, signal.SIGKILL])
def test_run_killed_while_writing_loses_nothing(tmp_path, small_case, sig):
    """A real subprocess killed in the middle of writing the workbook."""
    out, js = _existing(tmp_path)
    before = _snapshot(tmp_path)
    ready = tmp_path.parent / f"ready-{sig.name}"
    proc = subprocess.Popen(
        [sys.executable, "-c", KILLER, str(ready), "study", str(small_case), "-o", str(out),
         "--json", str(js), "--quiet"], stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    deadline = time.time() + 120
    while not ready.exists():
        assert proc.poll() is None, proc.communicate()
        assert time.time() < deadline
        time.sleep(0.05)
    proc.send_signal(sig)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode != 0
    assert b"Traceback" not in err
    after = _snapshot(tmp_path)
    assert after["out.xlsx"] == before["out.xlsx"]
    assert after["out.json"] == before["out.json"]
    if sig is signal.SIGKILL:
        # nothing can clean up after SIGKILL: the leftover names the dead process and
        # the next write removes it
        leftovers = [n for n in after if n not in before]
        assert all(n.startswith(".out.xlsx.") and n.endswith(".part") for n in leftovers)
        assert main(["optimize", str(small_case), "--alternative", "fuel"]) == 0
        from purgeplan.output.atomic import write_atomically

        write_atomically(out, lambda p: Path(p).write_bytes(b"new"))
        assert not [n for n in os.listdir(tmp_path) if n.endswith(".part")]
    else:
        assert set(after) == set(before), "no stray temporary files"


def test_exception_during_json_save_leaves_earlier_json(tmp_path, small_case, monkeypatch):
    out, js = _existing(tmp_path)
    before = _snapshot(tmp_path)
    import purgeplan.output.json_out as json_out

    def broken(text, *a, **k):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(json_out.json, "dumps", broken)
    code = main(["optimize", str(small_case), "--alternative", "fuel", "--json", str(js)])
    assert code == 5  # a failure to write, after the work
    assert _snapshot(tmp_path) == before


def test_solver_fault_marks_one_alternative_failed_everywhere(tmp_path, small_case,
                                                              monkeypatch, capsys):
    """One alternative's HiGHS fails: reported in terminal, JSON and workbook; exit 4."""
    original = LoopLP._converge

    def flaky(self, *args):
        if self.loop.name == "flare":
            from purgeplan.errors import SolverFailure

            raise SolverFailure("HiGHS stopped with 'error' (simulated fault)")
        return original(self, *args)

    monkeypatch.setattr(LoopLP, "_converge", flaky)
    monkeypatch.setenv("COLUMNS", "200")  # the reasons on one line each
    out, js = tmp_path / "s.xlsx", tmp_path / "s.json"
    code = main(["study", str(small_case), "-o", str(out), "--json", str(js), "--quiet"])
    assert code == 4
    text = capsys.readouterr().out
    assert "FAILED: HiGHS stopped with 'error' (simulated fault)" in text
    doc = json.loads(js.read_text())
    by = {a["name"]: a for a in doc["alternatives"]}
    assert by["flare"]["status"] == "failed" and "simulated fault" in by["flare"]["message"]
    assert by["fuel"]["status"] == "optimal" and by["fuel"]["feasible"]
    import openpyxl

    wb = openpyxl.load_workbook(out)
    cells = [str(c.value) for row in wb["Ranking"].iter_rows() for c in row if c.value]
    assert any("simulated fault" in c for c in cells)


def test_time_limit_reported_with_exit_4(tmp_path, small_case, capsys):
    js = tmp_path / "t.json"
    code = main(["optimize", str(small_case), "--time-limit", "1e-9", "--json", str(js)])
    assert code == 4
    doc = json.loads(js.read_text())
    assert all(a["status"] == "time limit" for a in doc["alternatives"])
    assert "time limit" in capsys.readouterr().out


# -- extreme but valid cases ------------------------------------------------------------

def _demo_raw():
    raw = tomllib.loads(DEMO.read_text(encoding="utf-8"))
    for key in ("options", "alternatives", "exclude"):
        raw.pop(key, None)
    raw["makeup_sources"] = ["standard"]
    raw["loop"].pop("max_inert_fraction_reactor_inlet")
    return raw


def _with_inert(raw, inert):
    comp = raw["sources"]["standard"]["composition"]
    comp.update(Ar=inert * 0.2, CH4=inert * 0.8, H2=0.75 * (1 - inert))
    comp["N2"] = 1.0 - comp["H2"] - comp["Ar"] - comp["CH4"]
    return raw


def _extremes():
    cases = {}
    for inert in (1e-6, 1e-3, 0.05, 0.2):
        cases[f"inert {inert:g}"] = _with_inert(_demo_raw(), inert)
    raw = _demo_raw()
    raw["loop"].update(purge_fraction_min=1e-6, purge_fraction_max=1e-5, purge_fraction=5e-6)
    cases["purge near 0"] = raw
    raw = _demo_raw()
    raw["loop"].update(purge_fraction_min=0.9, purge_fraction_max=0.99, purge_fraction=0.95)
    cases["purge near 1"] = raw
    raw = _demo_raw()
    raw["reactions"][0]["approach_to_equilibrium"] = 0.999
    cases["close to equilibrium"] = raw
    for t_d in (1e-3, 0.5, 20000.0):  # the smallest plant the case schema accepts, and more
        raw = _demo_raw()
        raw["loop"]["production_t_d"] = t_d
        cases[f"{t_d:g} t/d"] = raw
    return cases


@pytest.mark.parametrize("label", list(_extremes()))
def test_extreme_valid_cases_converge_or_are_reported(label):
    loop = build_loop(validate_case_dict(_extremes()[label]), label)
    try:
        state = steady_state(loop)
        assert state.balance_error < 1e-9, label
    except NoSteadyStateError as exc:
        assert str(exc), label
    opt = optimise(loop)
    assert opt.status in (Status.OPTIMAL, Status.INFEASIBLE), (label, opt.message)
    if opt.feasible:
        assert opt.state.balance_error < 1e-9
        lo, hi = loop.purge_fraction_min, loop.purge_fraction_max
        assert lo <= opt.state.purge_fraction <= hi
    else:
        assert opt.message


def test_case_text_is_data_not_code(tmp_path, capsys):
    """Strings that look like code or formulas stay strings: nothing in a case is evaluated."""
    marker = tmp_path / "pwned"
    text = DEMO.read_text(encoding="utf-8").replace(
        'name = "Northfield ammonia loop (invented demo)"',
        f'name = "__import__(\'os\').system(\'touch {marker}\') =1+1"')
    path = tmp_path / "code.toml"
    path.write_text(text, encoding="utf-8")
    assert main(["check", str(path)]) == 0
    assert not marker.exists()
    assert "__import__" in capsys.readouterr().out
