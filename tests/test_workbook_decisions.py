"""The workbook's decision cells, stored results, labels and paper; the terminal's decision.

Reference for every number: the tool's own cost model.  A re-priced workbook
is recalculated by LibreOffice Calc (headless) and its ranks, best
alternative, runner-up, savings and validity check are compared with the
engine's costs (:func:`purgeplan.costs.evaluate`) of the same operating
points at the new prices.  The study is the reduced demo copy of
tests/test_workbook.py; the paper test renders the whole ammonia demo.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import subprocess
import sys

import openpyxl
import pandas as pd
import pytest
from openpyxl.utils import get_column_letter
from test_workbook import (
    CASE_NAME,
    DEMO,
    EXTRA,
    REL,
    SOFFICE,
    alternatives_table,
    cost_cells,
    needs_soffice,
    recalculate,
)

from purgeplan import costs
from purgeplan.case import parse_case_text
from purgeplan.output import workbook
from purgeplan.output.workbook import build_workbook, write_workbook
from purgeplan.study import (
    BreakEven,
    alternative_labels,
    break_even_words,
    choice_words,
    levers_changing_best,
    recommendation,
    run_study,
)

SAME = "at the prices now in this workbook the ranking is the one computed."
OTHER = "at the prices now in this workbook the ranking is not the one computed"


@pytest.fixture(scope="module")
def study():
    """The reduced demo study of tests/test_workbook.py (its fixture, built the same way)."""
    text = DEMO.read_text(encoding="utf-8").replace(
        'name = "Northfield ammonia loop (invented demo)"', f'name = "{CASE_NAME}"') + EXTRA
    sha = hashlib.sha256(text.encode("utf-8")).hexdigest()
    return run_study(parse_case_text(text), sha, sensitivity_alternatives=2)


@pytest.fixture(scope="module")
def written(study, tmp_path_factory):
    return write_workbook(tmp_path_factory.mktemp("workbook") / "study.xlsx", study)


def _formula_cells(wb):
    for ws in wb:
        for row in ws.iter_rows():
            for cell in row:
                if cell.data_type == "f":
                    yield ws.title, cell.coordinate


# ---------------------------------------------------------------------------
# stored results (no spreadsheet program)


def test_formulas_are_stored_with_their_results(study, written):
    """A reader that does not calculate sees every formula's value at the case prices."""
    formulas = openpyxl.load_workbook(written)
    values = openpyxl.load_workbook(written, data_only=True)
    cells = list(_formula_cells(formulas))
    assert len(cells) > 100
    missing = [(t, c) for t, c in cells if values[t][c].value is None]
    assert missing == []
    got = cost_cells(values)
    for alt in study.alternatives:
        if alt.optimum.feasible:
            i = int(alt.code[1:])
            assert got[i]["tac"] == pytest.approx(alt.optimum.state.tac_per_year, rel=REL)


def test_pandas_reads_the_tacs(study, written):
    table = pd.read_excel(written, sheet_name=workbook.RANKING, header=None)
    head = table.index[table[0] == "Code"][0]
    rows = table.iloc[head + 1: head + 1 + len(study.alternatives)]
    header = list(table.iloc[head])
    tac = dict(zip(rows[0], rows[header.index("TAC [EUR/year]")], strict=True))
    for alt in study.alternatives:
        if alt.optimum.feasible:
            assert tac[alt.code] == pytest.approx(alt.optimum.state.tac_per_year, rel=REL)
        else:
            assert pd.isna(tac[alt.code])


def test_every_input_cell_drives_a_formula(study):
    """No dead inputs: each yellow cell's name is used by a cost build-up formula."""
    wb = build_workbook(study)
    text = " ".join(str(wb[workbook.COSTS][c].value) for t, c in _formula_cells(wb)
                    if t == workbook.COSTS)
    used = set(re.findall(r"[A-Za-z_][A-Za-z0-9_.]*", text))
    assert set(wb.defined_names) <= used
    ws = wb[workbook.ASSUMPTIONS]
    inputs = [c for c in ws["C"] if c.fill.fgColor.rgb == workbook._INPUT_FILL.fgColor.rgb]
    assert len(inputs) == len(wb.defined_names)
    # the demo is on the production basis: its product price is no input, only listed
    assert "product_price_per_t" not in wb.defined_names
    listed = [c.value for c in ws["A"]]
    assert "product_price_per_t" in listed[listed.index(next(
        v for v in listed if isinstance(v, str) and v.startswith("Case values no formula"))):]


def test_the_check_and_the_summary_at_the_case_prices(study):
    wb = build_workbook(study)
    results = workbook._results(wb)
    summary, ranking = wb[workbook.SUMMARY], wb[workbook.RANKING]
    assert results[(workbook.SUMMARY, "A6")].endswith(SAME)
    assert results[(workbook.RANKING, "A2")].endswith(SAME)
    assert "SUMPRODUCT" in summary["A6"].value and "RANK(" in ranking.cell(
        next(c.row for c in ranking["A"] if c.value == "Code") + 1, 3).value
    # the recommendation is a formula whose stored value is the terminal's sentence
    assert summary["A5"].data_type == "f"
    assert results[(workbook.SUMMARY, "A5")] == recommendation(study)
    rules = [r for rng in summary.conditional_formatting for r in rng.rules]
    assert len(rules) == 2 and all("is not the one" in r.formula[0] for r in rules)


# ---------------------------------------------------------------------------
# through LibreOffice


@needs_soffice
def test_stored_results_equal_the_recalculated_ones(written, tmp_path):
    """Every formula's stored value is what LibreOffice computes from the formula."""
    stored = openpyxl.load_workbook(written, data_only=True)
    again = openpyxl.load_workbook(recalculate(written, tmp_path), data_only=True)
    checked = 0
    for title, ref in _formula_cells(openpyxl.load_workbook(written)):
        a, b = stored[title][ref].value, again[title][ref].value
        if isinstance(a, float | int) and not isinstance(a, bool):
            assert b == pytest.approx(a, rel=1e-9, abs=1e-9), (title, ref)
        else:
            assert a == b, (title, ref)
        checked += 1
    assert checked > 100


def _reprice(study, written, tmp_path, changes: dict[str, float]):
    """Set every input cell of the given tool keys; the recalculated workbook and the
    engine's TAC of each feasible alternative at its optimum at the new values."""
    wb = openpyxl.load_workbook(written)
    ws = wb[workbook.ASSUMPTIONS]
    head = [c.value for c in ws[2]]
    name_col, key_col = head.index("Name"), head.index("Key in the tool")
    hit = set()
    for row in ws.iter_rows(min_row=3):
        key = row[key_col].value
        if key in changes and row[name_col].value in wb.defined_names:
            row[2].value = changes[key]
            hit.add(key)
    assert hit == set(changes)
    target = tmp_path / "repriced.xlsx"
    wb.save(target)
    got = openpyxl.load_workbook(recalculate(target, tmp_path), data_only=True)
    want = {}
    for alt in study.alternatives:
        if alt.optimum.feasible:
            values = costs.values(costs.assumptions(alt.loop))
            values.update({k: v for k, v in changes.items() if k in values})
            lines = costs.evaluate(costs.cost_lines(alt.loop), alt.optimum.state.quantities,
                                   values)
            want[alt.code] = sum(lines.values())
    return got, want


def _assert_live_decision(study, got, want):
    """Ranks, the ranked view, the Summary and the check follow the engine's re-priced TACs."""
    order = sorted(want, key=lambda code: (want[code], int(code[1:])))
    table = alternatives_table(got[workbook.RANKING])
    for code, tac in want.items():
        assert table[code]["TAC [EUR/year]"] == pytest.approx(tac, rel=REL)
        assert table[code]["Rank at the prices in this workbook"] == order.index(code) + 1
    by_code = {a.code: a for a in study.alternatives}
    view = got[workbook.RANKING]
    for k, code in enumerate(order, start=1):
        assert view.cell(4 + k, 3).value == code
        assert view.cell(4 + k, 2).value == by_code[code].label
        assert view.cell(4 + k, 5).value == pytest.approx(want[code], rel=REL)
    summary = {row[0]: row[1] for row in got[workbook.SUMMARY].iter_rows(values_only=True)}
    best, second = by_code[order[0]], by_code[order[1]]
    assert summary["Best alternative"] == f"{best.code} {best.label}"
    assert summary["Runner-up"] == f"{second.code} {second.label}"
    saving = want[order[1]] - want[order[0]]
    assert summary["Saving against the runner-up"] == pytest.approx(saving, rel=1e-9)
    headline = got[workbook.SUMMARY]["A5"].value
    assert headline.startswith(f"Recommendation: {best.code} {best.label}, purging ")
    assert f"{saving:,.0f} EUR/year less than the runner-up {second.code} " in headline
    computed = [a.code for a in study.ranked]
    check = got[workbook.SUMMARY]["A6"].value
    assert check == got[workbook.RANKING]["A2"].value
    assert check.endswith(SAME) == (order == computed)
    assert (OTHER in check) == (order != computed)
    return order != computed


@needs_soffice
def test_a_cheaper_purified_grade_re_ranks_and_flips_the_check(study, written, tmp_path):
    """The purified grade cut from 2.42 to 1.9 EUR/kmol: its alternative becomes the best."""
    got, want = _reprice(study, written, tmp_path, {"price_per_kmol:purified": 1.9})
    assert _assert_live_decision(study, got, want), "this price must change the ranking"
    purified = next(a for a in study.alternatives if a.choices.get("makeup_grade") ==
                    "purified")
    assert min(want, key=want.get) == purified.code
    summary = {row[0]: row[1] for row in got[workbook.SUMMARY].iter_rows(values_only=True)}
    assert summary["Inputs on the Assumptions sheet changed from the case"] == 1


@needs_soffice
def test_zero_discount_rate_cost_index_and_hours(study, written, tmp_path):
    got, want = _reprice(study, written, tmp_path, {"discount_rate": 0.0,
                                                    "cost_index_ratio": 1.1,
                                                    "hours_per_year": 8000.0})
    _assert_live_decision(study, got, want)
    cells = cost_cells(got)
    for alt in study.alternatives:
        if alt.optimum.feasible:    # straight-line capital: the CRF is 1 / life at a zero rate
            assert cells[int(alt.code[1:])]["tac"] == pytest.approx(want[alt.code], rel=REL)


# ---------------------------------------------------------------------------
# labels and the decision in words


def test_labels_are_codes_and_choices_in_words():
    case = parse_case_text(DEMO.read_text(encoding="utf-8"))
    named = [("makeup_grade=standard, purge_destination=fuel, recovery=membrane",
              {"makeup_grade": "standard", "purge_destination": "fuel",
               "recovery": "membrane"}),
             ("makeup_grade=blend, purge_destination=flare, recovery=none",
              {"makeup_grade": "blend", "purge_destination": "flare", "recovery": "none"})]
    assert alternative_labels(case, named) == [
        ("A1", "standard gas, purge to fuel, membrane"),
        ("A2", "blend gas, purge to flare, no recovery")]
    assert choice_words("loop_pressure", "high", {"loop": {"pressure_bar": 220}}) == "220 bar"
    assert choice_words("power", "dear", {"economics": {}}) == "power dear"


def test_a_case_labels_an_alternative_itself():
    text = DEMO.read_text(encoding="utf-8") + """
[[alternatives]]
name = "makeup_grade=standard, purge_destination=fuel, recovery=none"
choices = { makeup_grade = "standard", purge_destination = "fuel", recovery = "none" }
label = "as built"
[[alternatives]]
name = "purified and membrane"
choices = { makeup_grade = "purified", purge_destination = "fuel", recovery = "membrane" }
"""
    case = parse_case_text(text)
    named = [(a.name, dict(a.choices)) for a in case.alternatives]
    assert alternative_labels(case, named) == [("A1", "as built"),
                                               ("A2", "purified and membrane")]


@pytest.mark.parametrize(("label", "reason"), [
    ('""', "at least 1 character"), ('"' + "x" * 61 + '"', "at most 60 characters"),
    ("7", "valid string"), ('"a\\tb"', "one line")])
def test_a_bad_label_is_refused_naming_the_field(tmp_path, label, reason):
    case = tmp_path / "case.toml"
    case.write_text(DEMO.read_text(encoding="utf-8") + f"""
[[alternatives]]
name = "standard"
choices = {{ makeup_grade = "standard" }}
label = {label}
""", encoding="utf-8")
    out = tmp_path / "study.xlsx"
    done = subprocess.run([sys.executable, "-m", "purgeplan", "study", str(case), "-o",
                           str(out), "--quiet"], capture_output=True, text=True, timeout=300,
                          check=False)
    assert done.returncode == 2, done.stdout + done.stderr
    lines = [line for line in done.stderr.splitlines() if line.strip()]
    assert len(lines) == 1 and "alternatives[0].label" in lines[0] and reason in lines[0]
    assert not out.exists()


def _entry(premium: float, grade_price: float) -> BreakEven:
    return BreakEven(grade="purified", base_grade="standard", alternative="p",
                     base_alternative="s", base_price_per_kmol=2.3,
                     grade_price_per_kmol=grade_price, tie_price_per_kmol=2.3 + premium,
                     premium_per_kmol=premium, premium_percent=100 * premium / 2.3,
                     tac_at_tie_per_year=1.0e8)


def test_break_even_in_plain_words():
    pays = break_even_words(_entry(0.15, 2.42), "EUR")
    assert "purified pays if its premium over standard is below 0.1500 EUR/kmol" in pays
    assert pays.endswith("the quoted premium is 0.1200 EUR/kmol, so purified pays.")
    loses = break_even_words(_entry(-0.0151, 2.42), "EUR")
    assert "negative, so purified loses even at the price of standard" in loses
    assert loses.endswith("so purified does not pay.")


def test_the_study_states_the_decision_in_the_terminal(tmp_path):
    """The recommendation, break-even and levers, printed as the JSON records them."""
    text = DEMO.read_text(encoding="utf-8") + """
[[alternatives]]
name = "standard grade"
choices = { makeup_grade = "standard", purge_destination = "fuel", recovery = "none" }
[[alternatives]]
name = "purified grade"
choices = { makeup_grade = "purified", purge_destination = "fuel", recovery = "none" }
"""
    case = tmp_path / "case.toml"
    case.write_text(text, encoding="utf-8")
    target = tmp_path / "study.json"
    done = subprocess.run([sys.executable, "-m", "purgeplan", "study", str(case), "-o",
                           str(tmp_path / "s.xlsx"), "--json", str(target), "--quiet"],
                          capture_output=True, text=True, timeout=600, check=False,
                          env={**os.environ, "COLUMNS": "2000"})
    assert done.returncode == 0, done.stdout + done.stderr
    doc = json.loads(target.read_text(encoding="utf-8"))
    decision = doc["decision"]
    lines = done.stdout.splitlines()
    assert decision["recommendation"] in lines
    best = next(r for r in doc["alternatives"] if r["name"] == doc["ranking"][0])
    other = next(r for r in doc["alternatives"] if r["name"] == doc["ranking"][1])
    present = decision["present"][best["name"]]
    sentence = decision["recommendation"]
    assert sentence.startswith(f"Recommendation: {best['code']} {best['label']}, purging "
                               f"{100 * best['purge_fraction']:.3f} % of the separator vapour "
                               f"(inert setpoint {100 * best['inert_fraction_reactor_inlet']:.2f}")
    assert (f"{other['tac_per_year'] - best['tac_per_year']:,.0f} EUR/year less than the "
            f"runner-up {other['code']} {other['label']}") in sentence
    assert (f"{present['tac_per_year'] - best['tac_per_year']:,.0f} EUR/year less than running "
            f"it at the present purge fraction {100 * present['purge_fraction']:.2f} %") in sentence
    (words,) = decision["break_even_words"]
    (be,) = doc["break_even"]
    assert "break-even: " + words in lines
    quoted = be["grade_price_per_kmol"] - be["base_price_per_kmol"]
    verdict = "pays" if quoted < be["premium_per_kmol"] else "does not pay"
    assert words.endswith(f"the quoted premium is {quoted:.4f} EUR/kmol, so purified {verdict}.")
    levers = [line for line in lines if line.startswith("levers that change the best")]
    assert len(levers) == 1
    assert levers[0].endswith("; ".join(decision["levers_changing_best"]) or "none")
    assert {r["label"] for r in doc["alternatives"]} == {"standard grade", "purified grade"}


def test_levers_that_change_the_best_are_listed(study):
    rows = [r for r in study.sensitivity if r.best_changes]
    said = levers_changing_best(study)
    expected = sum((r.best_at_low != study.best.name) + (r.best_at_high != study.best.name)
                   for r in rows)
    assert len(said) == expected
    hours = next(r for r in study.sensitivity if r.lever == "hours_per_year")
    assert hours.high_factor_applied == pytest.approx(8784 / 8200, rel=1e-12)
    bars = [c.value for c in build_workbook(study)[workbook.SENSITIVITY]["A"]
            if isinstance(c.value, str) and c.value.startswith("Hours on stream (")]
    assert bars == [f"Hours on stream (x0.8 / x{8784 / 8200:.4g})"]


# ---------------------------------------------------------------------------
# paper


def _width(ws, col: int) -> float:
    dim = ws.column_dimensions.get(get_column_letter(col))
    return dim.width if dim is not None and dim.width else 8.43


def _cut_cells(wb) -> list[tuple]:
    """Text cells a spreadsheet would show cut, by the rules spreadsheets lay text out by.

    Text that does not wrap spills into the empty cells to its right and is
    cut at the first occupied one: it must fit the width up to there (a
    character of 11-point text takes about one unit of column width; 10 %
    allowed for narrower letters).  Wrapped text is cut when its row is too
    low: the row must hold the lines the text wraps to, at 15 points a line
    (:func:`purgeplan.output.workbook._text_lines`).  Merged cells count
    their whole width; a formula is judged by its stored result.
    """
    results = workbook._results(wb)
    cut = []
    for ws in wb:
        merged = {(r.min_row, r.min_col): r for r in ws.merged_cells.ranges}
        for row in ws.iter_rows():
            for cell in row:
                value = results.get((ws.title, cell.coordinate)) if cell.data_type == "f" \
                    else cell.value
                if not isinstance(value, str) or not value:
                    continue
                span = merged.get((cell.row, cell.column))
                last = span.max_col if span else cell.column
                room = sum(_width(ws, c) for c in range(cell.column, last + 1))
                scale = (cell.font.sz or 11) / 11
                if cell.alignment.wrap_text:
                    lines = workbook._text_lines(value, room / scale)
                    height = ws.row_dimensions[cell.row].height or workbook.LINE_POINTS
                    if height < lines * workbook.LINE_POINTS * scale - 0.5:
                        cut.append((ws.title, cell.coordinate, "row too low", value[:40]))
                    continue
                col = last + 1
                while len(value) * scale > room and ws.cell(cell.row, col).value is None \
                        and col < 300:
                    room += _width(ws, col)
                    col += 1
                if len(value) * scale > 1.1 * room:
                    cut.append((ws.title, cell.coordinate, "too wide", value[:40]))
    return cut


def test_no_text_cell_is_cut(study):
    assert _cut_cells(build_workbook(study)) == []


def _pages(pdf: bytes) -> int:
    return len(re.findall(rb"/Type\s*/Page[^s]", pdf))


@pytest.fixture(scope="module")
def demo_workbook(tmp_path_factory):
    """The bundled ammonia demo's whole study workbook (invented data)."""
    text = DEMO.read_text(encoding="utf-8")
    sha = hashlib.sha256(text.encode("utf-8")).hexdigest()
    result = run_study(parse_case_text(text), sha)
    return result, write_workbook(tmp_path_factory.mktemp("demo") / "demo.xlsx", result)


def test_every_sheet_prints_landscape_one_page_wide_with_case_date_and_page(demo_workbook):
    result, path = demo_workbook
    wb = openpyxl.load_workbook(path)
    for ws in wb:
        setup = ws.page_setup
        assert setup.orientation == "landscape", ws.title
        assert int(setup.fitToWidth) == 1 and ws.sheet_properties.pageSetUpPr.fitToPage
        assert ws.print_title_rows, ws.title
        assert ws.oddHeader.left.text == result.case_name
        assert "&D" in ws.oddFooter.left.text and ws.oddFooter.right.text == "Page &P of &N"


@needs_soffice
def test_the_demo_workbook_prints_in_at_most_20_pages(demo_workbook, tmp_path):
    result, path = demo_workbook
    assert _cut_cells(build_workbook(result)) == []
    profile = tmp_path / "lo-profile"
    done = subprocess.run([SOFFICE, f"-env:UserInstallation={profile.as_uri()}", "--headless",
                           "--norestore", "--convert-to", "pdf", "--outdir", str(tmp_path),
                           str(path)], capture_output=True, text=True, timeout=300, check=False)
    pdf = tmp_path / "demo.pdf"
    assert done.returncode == 0 and pdf.exists(), done.stderr
    pages = _pages(pdf.read_bytes())
    assert len(openpyxl.load_workbook(path).sheetnames) <= pages <= 20
