"""Tests of the study workbook (purgeplan.output.workbook).

Reference for every number: the tool's own cost model.  The cost build-up
must re-price exactly as :func:`purgeplan.costs.evaluate` does, so the
formulas are evaluated by an independent spreadsheet program (LibreOffice
Calc, headless, with a fresh user profile) and the results read back with
openpyxl (``data_only=True``) are compared with the engine to 1e-9 relative.

The study is a reduced copy of cases/ammonia_demo.toml: three feasible
alternatives and one infeasible twin (an inert limit below the inert
fraction of the make-up gas), with names that begin with ``=``, ``+``,
``@`` and ``-`` so that formula injection is exercised, and one alternative
with its own power price so that an alternative-specific assumption cell is
exercised.
"""

from __future__ import annotations

import hashlib
import os
import re
import shutil
import subprocess
from pathlib import Path

import openpyxl
import pytest

from purgeplan import costs
from purgeplan.case import parse_case_text
from purgeplan.cautions import CAUTIONS
from purgeplan.output import workbook
from purgeplan.output.workbook import build_workbook, write_workbook
from purgeplan.study import run_study

DEMO = Path(__file__).resolve().parents[1] / "cases" / "ammonia_demo.toml"
SOFFICE = shutil.which("soffice") or shutil.which("libreoffice")
needs_soffice = pytest.mark.skipif(SOFFICE is None, reason="LibreOffice (soffice) not installed")

CASE_NAME = "=1+1 Northfield (reduced test copy)"
NAMES = {
    "fuel": "=2+3",
    "dear": "+purified, flare, dear power",
    "membrane": "@standard, membrane",
    "tight": "-1+2 tight inert limit",
}
EXTRA = f"""
[options.power.dear]
economics = {{ power_price_per_kwh = 0.09 }}
[options.inert_limit.tight]
loop = {{ max_inert_fraction_reactor_inlet = 0.001 }}

[[alternatives]]
name = "{NAMES['fuel']}"
choices = {{ makeup_grade = "standard", purge_destination = "fuel", recovery = "none" }}
[[alternatives]]
name = "{NAMES['dear']}"
choices = {{ makeup_grade = "purified", purge_destination = "flare", power = "dear" }}
[[alternatives]]
name = "{NAMES['membrane']}"
choices = {{ makeup_grade = "standard", purge_destination = "fuel", recovery = "membrane" }}
[[alternatives]]
name = "{NAMES['tight']}"
choices = {{ makeup_grade = "standard", inert_limit = "tight" }}
"""
REL = 1e-9


@pytest.fixture(scope="module")
def study():
    """The reduced demo study (about ten seconds: optimum, sensitivity, break-even)."""
    text = DEMO.read_text(encoding="utf-8")
    original = 'name = "Northfield ammonia loop (invented demo)"'
    assert original in text, "the demo case changed; update this fixture"
    text = text.replace(original, f'name = "{CASE_NAME}"') + EXTRA
    sha = hashlib.sha256(text.encode("utf-8")).hexdigest()
    return run_study(parse_case_text(text), sha, sensitivity_alternatives=2)


@pytest.fixture(scope="module")
def written(study, tmp_path_factory):
    return write_workbook(tmp_path_factory.mktemp("workbook") / "study.xlsx", study)


@pytest.fixture(scope="module")
def recalculated(written, tmp_path_factory):
    if SOFFICE is None:
        pytest.skip("LibreOffice (soffice) not installed")
    return recalculate(written, tmp_path_factory.mktemp("recalculated"))


def recalculate(src: Path, workdir: Path) -> Path:
    """Open ``src`` in headless LibreOffice Calc and save it again as .xlsx.

    openpyxl stores formulas without cached results, so Calc computes every
    formula on load; the saved copy carries the computed values.  A fresh
    user profile keeps the run independent of any other LibreOffice.
    """
    profile = workdir / "lo-profile"
    out = workdir / "out"
    out.mkdir(exist_ok=True)
    cmd = [SOFFICE, f"-env:UserInstallation={profile.as_uri()}", "--headless", "--norestore",
           "--convert-to", "xlsx", "--outdir", str(out), str(src)]
    done = subprocess.run(cmd, capture_output=True, text=True, timeout=300, check=False)
    result = out / src.name
    assert done.returncode == 0 and result.exists(), (done.stdout, done.stderr)
    return result


def cost_cells(wb) -> dict[int, dict]:
    """Cost build-up values by alternative number (A1 is 1): lines by key, TAC, tonnes, per
    tonne, and the lines and TAC at the present purge fraction."""
    ws = wb[workbook.COSTS]
    out: dict[int, dict] = {}
    current = None
    for a, kind, qty, _unit, cost, _qty_now, cost_now, _recipe, key in ws.iter_rows(
            min_row=3, max_col=9, values_only=True):
        if isinstance(a, str) and (m := re.match(r"A(\d+) .* \((rank \d+|not ranked)", a)):
            current = out.setdefault(int(m.group(1)), {"lines": {}, "present": {}})
        elif kind in ("hourly", "capital", "replacement"):
            current["lines"][key] = cost
            current["present"][key] = cost_now
        elif a == "Total annualised cost (TAC)":
            current["tac"] = cost
            current["present_tac"] = cost_now
        elif a == "Annual product":
            current["tonnes"] = qty
        elif isinstance(a, str) and a.startswith("Cost per tonne"):
            current["per_tonne"] = cost
    return out


def numbered(study):
    """(number, alternative) pairs: the number of its code, A1 is 1."""
    return [(int(a.code[1:]), a) for a in study.alternatives]


def alternatives_table(ws) -> dict[str, dict]:
    """The Ranking sheet's table of alternatives by code, rows keyed by the header texts."""
    head = next(c.row for c in ws["A"] if c.value == "Code")
    header = [c.value for c in ws[head]]
    rows = {}
    for row in ws.iter_rows(min_row=head + 1, values_only=True):
        if not (isinstance(row[0], str) and re.fullmatch(r"A\d+", row[0])):
            break
        rows[row[0]] = dict(zip(header, row, strict=False))
    return rows


# ---------------------------------------------------------------------------
# structure (no spreadsheet program needed)


def _sheets(study) -> list[str]:
    """The workbook's sheets: the fixed ones, and the price scenarios where the case has them
    (the demo carries an [uncertainty] table)."""
    from purgeplan.output.uncertainty_out import SHEET

    return list(workbook.SHEETS) + ([SHEET] if study.uncertainty is not None else [])


def test_sheets_names_and_layout(study):
    wb = build_workbook(study)
    assert wb.sheetnames == _sheets(study)
    for ws in wb:
        # Excel's limits on sheet names: 31 characters, none of []:*?/\
        assert len(ws.title) <= 31 and not set(ws.title) & set("[]:*?/\\")
        assert ws.freeze_panes is not None, ws.title
    for name, dn in wb.defined_names.items():
        assert re.fullmatch(r"[A-Za-z_][A-Za-z0-9_.]*", name)
        assert not re.fullmatch(r"[A-Za-z]{1,3}[0-9]+|[RrCc][0-9]*|[Rr][0-9]*[Cc][0-9]*", name)
        (sheet, cell), = dn.destinations
        assert sheet == workbook.ASSUMPTIONS
        assert isinstance(wb[sheet][cell.replace("$", "")].value, float)
    assert "price_per_kmol_standard" in wb.defined_names
    # only the alternative with its own power price has its own cell
    dear = next(i for i, a in numbered(study) if a.name == NAMES["dear"])
    assert [n for n in wb.defined_names if re.search(r"_A\d+$", n)] == \
        [f"power_price_per_kwh_A{dear}"]
    # one combined scatter chart: a curve per feasible alternative, then the optima and the
    # points where a limit stops a curve, each a series of one point per alternative
    (chart,) = wb[workbook.CURVES]._charts
    assert chart.tagname == "scatterChart"
    assert len(chart.series) == len(study.ranked) + 2
    n = len(study.ranked)
    for series, col in ((chart.series[n], "C"), (chart.series[n + 1], "E")):
        ref = series.yVal.numRef.f
        assert re.fullmatch(rf"'Cost curves'!\${col}\$(\d+):\${col}\$(\d+)", ref), ref
        first, last = map(int, re.findall(r"\d+", ref))
        assert last - first + 1 == n
    assert [c.tagname for c in wb[workbook.SENSITIVITY]._charts] == ["barChart"]


def test_cautions_method_and_provenance(study):
    wb = build_workbook(study)

    def texts(ws):
        return {c.value for row in ws.iter_rows() for c in row if isinstance(c.value, str)}

    for sheet in (workbook.SUMMARY, workbook.NOTES):
        assert set(CAUTIONS) <= texts(wb[sheet])
    notes = texts(wb[workbook.NOTES])
    assert study.case_sha256 in notes and study.created in notes
    assert f"purgeplan {study.tool_version}" in notes
    assert {a.optimum.solver.method for a in study.alternatives if a.optimum.solver.method} \
        <= notes
    # infeasible twin: no rank, its reason shown on the Ranking sheet
    ranking = {row["Option key"]: row for row in alternatives_table(wb[workbook.RANKING]).values()}
    tight = ranking[NAMES["tight"]]
    assert tight["Rank computed at the case prices"] == "-"
    assert tight["Status"] == "infeasible" and "inert limit" in tight["At limit"]


def _shown(value):
    """A record value as the workbook shows it: numbers as numbers, None as ``n/a``."""
    return "n/a" if value is None else value


def _table(ws, header_row: int, first: int, last: int | None = None) -> list[dict]:
    """Rows of a sheet table as dicts keyed by the header texts."""
    header = [c.value for c in ws[header_row]]
    return [dict(zip(header, row, strict=False)) for row in ws.iter_rows(
        min_row=first, max_row=last, values_only=True)]


def test_sensitivity_sheet_writes_every_record_field(study):
    """Each cell of the lever table is its record's value; capped moves show the factor applied.

    Hours on stream: the demo's 8200 h/year x 1.2 = 9840 h/year is more than a
    year has, so the lever applies 8784 / 8200 (366 days x 24 h).
    """
    ws = build_workbook(study)[workbook.SENSITIVITY]
    rows = _table(ws, 3, 4, 3 + len(study.sensitivity))
    assert [r["Lever"] for r in rows] == [r.lever for r in study.sensitivity]
    for cells, rec in zip(rows, study.sensitivity, strict=True):
        assert cells["Description"] == rec.label
        assert cells["Low factor [-]"] == rec.low_factor
        assert cells["High factor [-]"] == rec.high_factor
        assert cells["Low factor applied [-]"] == rec.low_factor_applied
        assert cells["High factor applied [-]"] == rec.high_factor_applied
        for name, swing in rec.tac.items():
            i = next(k for k, a in numbered(study) if a.name == name)
            for side in ("low", "base", "high"):
                assert cells[f"A{i} TAC at {side} [EUR/year]"] == _shown(getattr(swing, side))
        for side in ("low", "high"):
            best = study.by_name(getattr(rec, f"best_at_{side}"))
            assert cells[f"Best at {side}"] == f"{best.code} {best.label}"
        assert cells["Best changes"] == ("yes" if rec.best_changes else "no")
        assert cells["Note"] == (rec.note or "")
    hours = next(r for r in rows if r["Lever"] == "hours_per_year")
    assert {a.loop.prices.hours_per_year for a in study.alternatives} == {8200.0}
    assert hours["High factor applied [-]"] == pytest.approx(8784 / 8200, rel=1e-12)
    assert "8784" in hours["Note"]


def test_break_even_table_writes_every_record_field(study):
    """One column per purer grade, a field per row; the quoted premium and verdict live."""
    ws = build_workbook(study)[workbook.SUMMARY]
    head = next(c.row for c in ws["A"] if c.value == "Purer grade")
    fields = {ws.cell(r, 1).value: r for r in range(head, head + 13)}
    assert study.break_even, "the reduced demo has two make-up grades"
    for col, rec in enumerate(study.break_even, start=2):
        def cell(label, col=col):
            return ws.cell(fields[label], col).value

        assert cell("Purer grade") == rec.grade
        assert cell("Base grade") == rec.base_grade
        for label, name in (("Alternative (purer grade)", rec.alternative),
                            ("Base alternative", rec.base_alternative)):
            alt = study.by_name(name)
            assert cell(label) == f"{alt.code} {alt.label}"
        assert cell("Base price [EUR/kmol]") == rec.base_price_per_kmol
        assert cell("Grade price [EUR/kmol]") == rec.grade_price_per_kmol
        assert cell("Tie price [EUR/kmol]") == _shown(rec.tie_price_per_kmol)
        assert cell("Premium [EUR/kmol]") == _shown(rec.premium_per_kmol)
        assert cell("Premium [% of base price]") == _shown(rec.premium_percent)
        assert cell("TAC at tie [EUR/year]") == _shown(rec.tac_at_tie_per_year)
        assert cell("Quoted premium now [EUR/kmol]") == \
            f"=price_per_kmol_{rec.grade}-price_per_kmol_{rec.base_grade}"
        letter = chr(ord("A") + col - 1)
        assert cell("Pays at the quoted premium") == (
            f'=IF({letter}{fields["Quoted premium now [EUR/kmol]"]}<'
            f'{letter}{fields["Premium [EUR/kmol]"]},"pays","does not pay")')
        assert cell("Note") == (rec.note or "")
        # the demo quotes purified at 2.42 against 2.30 EUR/kmol
        assert rec.grade_price_per_kmol - rec.base_price_per_kmol == pytest.approx(0.12,
                                                                                   rel=1e-9)


def test_defined_names_are_valid_and_unique():
    taken: set[str] = set()
    name = workbook._defined_name
    assert name("price_per_kmol:standard", taken) == "price_per_kmol_standard"
    assert name("price_per_kmol:H2 grade/é", taken) == "price_per_kmol_H2_grade"
    assert name("A1", taken) == "_A1"              # would read as a cell reference
    assert name("R1C1", taken) == "_R1C1"          # R1C1 reference style
    assert name("true", taken) == "_true"          # logical value
    assert name("2x", taken) == "_2x"              # names start with a letter or _
    assert name("Standard", taken) == "Standard"
    assert name("standard", taken) == "standard_2"  # names compare without case


def test_case_text_is_never_a_formula(study):
    wb = build_workbook(study)
    case_texts = [*NAMES.values(), CASE_NAME]
    seen = set()
    for ws in wb:
        for row in ws.iter_rows():
            for cell in row:
                if cell.data_type == "f":
                    assert not any(t in cell.value for t in case_texts), cell.coordinate
                elif cell.value in case_texts:
                    assert cell.data_type == "s", (ws.title, cell.coordinate)
                    seen.add(cell.value)
    assert seen == set(case_texts)


# ---------------------------------------------------------------------------
# checks through an independent spreadsheet program


@needs_soffice
def test_recalculated_costs_equal_engine(study, recalculated):
    """Source: purgeplan.costs.evaluate (engine) vs LibreOffice Calc evaluating the formulas."""
    wb = openpyxl.load_workbook(recalculated, data_only=True)
    cells = cost_cells(wb)
    ranking = alternatives_table(wb[workbook.RANKING])
    checked = 0
    for i, alt in numbered(study):
        if not alt.optimum.feasible:
            assert cells[i]["lines"] == {} and "tac" not in cells[i]
            continue
        s = alt.optimum.state
        got = cells[i]
        assert set(got["lines"]) == set(s.costs)
        for key, want in s.costs.items():
            assert got["lines"][key] == pytest.approx(want, rel=REL), (alt.name, key)
        assert got["tac"] == pytest.approx(s.tac_per_year, rel=REL)
        assert got["tonnes"] == pytest.approx(s.quantities["product_t_h"]
                                              * alt.loop.prices.hours_per_year, rel=REL)
        assert got["per_tonne"] == pytest.approx(s.cost_per_tonne_product, rel=REL)
        row = ranking[f"A{i}"]
        assert row["TAC [EUR/year]"] == pytest.approx(s.tac_per_year, rel=REL)
        assert row["Cost per tonne [EUR/t]"] == pytest.approx(s.cost_per_tonne_product, rel=REL)
        assert row["Rank at the prices in this workbook"] == alt.rank
        present = alt.present.state
        assert got["present_tac"] == pytest.approx(present.tac_per_year, rel=REL)
        for key, want in present.costs.items():
            assert got["present"][key] == pytest.approx(want, rel=REL), (alt.name, key)
        checked += 1
    assert checked == 3
    summary = {row[0]: row[1] for row in wb[workbook.SUMMARY].iter_rows(values_only=True)}
    best, second = study.ranked[:2]
    assert summary["Saving against the runner-up"] == pytest.approx(
        second.optimum.state.tac_per_year - best.optimum.state.tac_per_year, rel=1e-6)


@needs_soffice
def test_changed_prices_reprice_every_alternative(study, written, tmp_path):
    """Source: costs.evaluate on the same quantities with the changed assumption values."""
    wb = openpyxl.load_workbook(written)
    changes = {"price_per_kmol_standard": 1.25, "power_price_per_kwh": 1.4}
    changes.update({n: 0.8 for n in wb.defined_names if n.startswith("power_price_per_kwh_A")})
    new_values = {}
    for name, factor in changes.items():
        (sheet, ref), = wb.defined_names[name].destinations
        cell = wb[sheet][ref.replace("$", "")]
        cell.value = new_values[name] = cell.value * factor
    own = [n for n in new_values if re.search(r"_A\d+$", n)]
    assert len(own) == 1, "the alternative with its own power price has its own cell"
    repriced = tmp_path / "repriced.xlsx"
    wb.save(repriced)
    cells = cost_cells(openpyxl.load_workbook(recalculate(repriced, tmp_path),
                                              data_only=True))
    keys = {"price_per_kmol_standard": "price_per_kmol:standard",
            "power_price_per_kwh": "power_price_per_kwh"}
    for i, alt in numbered(study):
        if not alt.optimum.feasible:
            continue
        values = costs.values(costs.assumptions(alt.loop))
        for base, key in keys.items():
            used = f"{base}_A{i}" if f"{base}_A{i}" in new_values else base
            if key in values and used in new_values:
                values[key] = new_values[used]
        state = alt.optimum.state
        lines = costs.evaluate(costs.cost_lines(alt.loop), state.quantities, values)
        want = sum(lines.values())
        assert cells[i]["tac"] == pytest.approx(want, rel=REL), alt.name
        assert abs(want - state.tac_per_year) > 1e-3 * state.tac_per_year  # really re-priced
        for key, value in lines.items():
            assert cells[i]["lines"][key] == pytest.approx(value, rel=REL), (alt.name, key)


@needs_soffice
def test_case_text_shown_as_text_after_round_trip(study, recalculated):
    """Names beginning with = + - @ stay the typed text in LibreOffice, never evaluated."""
    values = openpyxl.load_workbook(recalculated, data_only=True)
    formulas = openpyxl.load_workbook(recalculated)
    table = alternatives_table(values[workbook.RANKING])
    by_code = sorted(study.alternatives, key=lambda a: int(a.code[1:]))
    assert [row["Option key"] for row in table.values()] == [a.name for a in by_code]
    head = next(c.row for c in formulas[workbook.RANKING]["A"] if c.value == "Code")
    for r in range(head + 1, head + 1 + len(by_code)):
        for col in (2, 16):     # the label and the option key
            assert formulas[workbook.RANKING].cell(r, col).data_type == "s"
    for sheet, ref in ((workbook.SUMMARY, "B2"), (workbook.NOTES, "B4")):
        assert values[sheet][ref].value == CASE_NAME
        assert formulas[sheet][ref].data_type == "s"
    costs_sheet = [c.value for c in values[workbook.COSTS]["A"] if isinstance(c.value, str)]
    for i, alt in numbered(study):
        assert any(v.startswith(f"A{i} {alt.name} (") for v in costs_sheet)
        assert f"Option key: {alt.name}" in costs_sheet


# ---------------------------------------------------------------------------
# atomic write


def _broken_save(self, target):
    """Stands in for Workbook.save: writes half a file, then fails like a full disk."""
    if hasattr(target, "write"):
        target.write(b"PK\x03\x04 half a workbook")
    else:
        Path(target).write_bytes(b"PK\x03\x04 half a workbook")
    raise OSError("disk full (simulated)")


def test_failed_save_leaves_existing_workbook_unchanged(study, tmp_path, monkeypatch):
    target = tmp_path / "study.xlsx"
    write_workbook(target, study)
    before = target.read_bytes()
    listing = sorted(os.listdir(tmp_path))
    monkeypatch.setattr(openpyxl.Workbook, "save", _broken_save)
    with pytest.raises(OSError, match="simulated"):
        write_workbook(target, study)
    assert target.read_bytes() == before
    assert sorted(os.listdir(tmp_path)) == listing == ["study.xlsx"]


def test_failed_save_creates_nothing(study, tmp_path, monkeypatch):
    monkeypatch.setattr(openpyxl.Workbook, "save", _broken_save)
    with pytest.raises(OSError, match="simulated"):
        write_workbook(tmp_path / "new.xlsx", study)
    assert os.listdir(tmp_path) == []


def test_successful_write_replaces_and_leaves_no_temporary(study, tmp_path):
    target = tmp_path / "study.xlsx"
    target.write_bytes(b"old contents")
    assert write_workbook(str(target), study) == target
    assert target.read_bytes()[:2] == b"PK"
    assert os.listdir(tmp_path) == ["study.xlsx"]
    assert openpyxl.load_workbook(target).sheetnames == _sheets(study)
