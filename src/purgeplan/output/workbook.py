"""The study workbook: the hand-off to project economists.

One .xlsx per study, written with openpyxl.  The cost build-up of every
alternative is a set of live formulas over named cells on the Assumptions
sheet, written from the same cost-line recipes :func:`purgeplan.costs.evaluate`
uses, so a price changed in the workbook re-prices every alternative exactly
as the tool would at the same operating point (the purge fraction stays as
optimised; nothing is re-optimised or re-ranked in the spreadsheet).

Sheets: Summary, Ranking, Assumptions, Cost build-up, Streams, Cost curves,
Sensitivity, Notes.

Spreadsheet limits kept here: sheet names of at most 31 characters without
``[]:*?/\\``; defined names made of letters, digits, ``_`` and ``.`` that do
not look like cell references; cell text without control characters and at
most 32,767 characters.  Text that comes from the case (alternative, source
and case names, messages, the currency) is always written as a text cell, so
a value such as ``=2+3`` is shown as typed and never evaluated; the only
formulas in the workbook are the ones generated here.

The file is written atomically (:func:`purgeplan.output.atomic.write_atomically`):
a failed run leaves an existing workbook byte-for-byte unchanged.
"""

from __future__ import annotations

import logging
import math
import re
from dataclasses import dataclass, field
from pathlib import Path

from openpyxl import Workbook
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE
from openpyxl.chart import BarChart, Reference, ScatterChart, Series
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter, quote_sheetname
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.worksheet import Worksheet

from .. import costs, limits
from ..cautions import CAUTIONS
from ..equations import stream_conditions
from ..study import Alternative, StudyResult
from .atomic import write_atomically

log = logging.getLogger(__name__)

SUMMARY = "Summary"
RANKING = "Ranking"
ASSUMPTIONS = "Assumptions"
COSTS = "Cost build-up"
STREAMS = "Streams"
CURVES = "Cost curves"
SENSITIVITY = "Sensitivity"
NOTES = "Notes"
SHEETS = (SUMMARY, RANKING, ASSUMPTIONS, COSTS, STREAMS, CURVES, SENSITIVITY, NOTES)

UNITS = (
    ("-", "dimensionless (fractions, ratios, exponents)"),
    ("kmol/h", "kilomoles per hour"),
    ("kW", "kilowatt of shaft power"),
    ("kWh", "kilowatt hour"),
    ("m3", "cubic metre (catalyst volume)"),
    ("GJ/h", "gigajoule per hour, lower heating value basis"),
    ("t/h, t/year", "metric tonnes per hour, per year"),
    ("h/year", "hours on stream per year"),
    ("bar abs", "absolute pressure in bar"),
    ("1/year", "per year (capital recovery factor)"),
    ("<currency>/year", "money of the case currency per year of operation"),
    ("TAC", "total annualised cost: operating cost per year plus annualised capital"),
)

STREAM_LABELS = {
    "makeup": "Make-up gas",
    "direct_feed": "Direct feed to reactor",
    "reactor_feed": "Reactor feed",
    "reactor_outlet": "Reactor outlet",
    "liquid_product": "Liquid product",
    "separator_vapour": "Separator vapour",
    "purge": "Purge gas",
    "recycle": "Recycle gas",
    "recovery_return": "Recovery return",
    "recovery_tail_gas": "Recovery tail gas",
}

FMT_MONEY = "#,##0"
FMT_MONEY_2 = "#,##0.00"
FMT_FRACTION = "0.000000"
FMT_QUANTITY = "#,##0.000"
FMT_FACTOR = "0.00"
FMT_FACTOR_APPLIED = "0.0000"
FMT_PERCENT = "0.000"
FMT_CRF = "0.0000000"
FMT_RATIO = "0.000"
FMT_HOURS = "#,##0.0"

MAX_CELL_TEXT = 32767
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\n")
_BOLD = Font(bold=True)
_TITLE = Font(bold=True, size=13)
_HEADER_FILL = PatternFill("solid", fgColor="DDE4EE")
_INPUT_FILL = PatternFill("solid", fgColor="FFF2CC")
_HEADER_BORDER = Border(bottom=Side(style="thin"))
_WRAP = Alignment(wrap_text=True, vertical="top")


# ---------------------------------------------------------------------------
# public entry point


def write_workbook(path: str | Path, study: StudyResult) -> Path:
    """Write the study workbook to ``path`` atomically.

    Parameters
    ----------
    path : str or Path
        Target .xlsx file; its folder must exist.  An existing file is
        replaced only once the new workbook is completely written.
    study : StudyResult
        The ranked, optimised alternatives with break-even and sensitivity.

    Returns
    -------
    Path
        The path written.

    Raises
    ------
    OSError
        If the folder is missing or the file cannot be written; an existing
        workbook at ``path`` is then left as it was and no temporary file remains.
    """
    path = Path(path)
    wb = build_workbook(study)
    write_atomically(path, wb.save)
    log.info("wrote workbook %s (%d alternatives)", path, len(study.alternatives))
    return path


def build_workbook(study: StudyResult) -> Workbook:
    """The study workbook in memory (nothing is written to disk)."""
    wb = Workbook()
    wb.active.title = SHEETS[0]
    for title in SHEETS[1:]:
        wb.create_sheet(title)
    wb.calculation.fullCalcOnLoad = True
    wb.properties.creator = _clean_text(f"purgeplan {study.tool_version}")
    wb.properties.title = "Purge optimisation study"
    refs = _Refs(study)
    # Filled in dependency order: names first, then the cells that point at them.
    _assumptions_sheet(wb, wb[ASSUMPTIONS], study, refs)
    _cost_sheet(wb[COSTS], study, refs)
    _ranking_sheet(wb[RANKING], study, refs)
    _summary_sheet(wb[SUMMARY], study, refs)
    _streams_sheet(wb[STREAMS], study, refs)
    _curves_sheet(wb[CURVES], study, refs)
    _sensitivity_sheet(wb[SENSITIVITY], study, refs)
    _notes_sheet(wb[NOTES], study, refs)
    return wb


# ---------------------------------------------------------------------------
# cross-sheet bookkeeping


@dataclass
class _Refs:
    """Alternative numbers, defined names and the addresses of cells other sheets point at."""

    study: StudyResult
    number: dict[int, int] = field(default_factory=dict)     # id(alt) -> 1-based position
    names: dict[tuple[int, str], str] = field(default_factory=dict)  # (number, key) -> name
    tac: dict[int, str] = field(default_factory=dict)         # number -> absolute address
    tonnes: dict[int, str] = field(default_factory=dict)      # number -> annual product cell
    per_tonne: dict[int, str] = field(default_factory=dict)

    def __post_init__(self):
        for i, alt in enumerate(self.study.alternatives, start=1):
            self.number[id(alt)] = i

    def of(self, alt: Alternative) -> int:
        return self.number[id(alt)]

    def by_name(self, name: str) -> int | None:
        return next((self.of(a) for a in self.study.alternatives if a.name == name), None)


def _address(sheet: str, row: int, col: int) -> str:
    """Absolute reference to one cell, the sheet name quoted."""
    return f"{quote_sheetname(sheet)}!${get_column_letter(col)}${row}"


_CELL_LIKE = re.compile(r"^([A-Za-z]{1,3}[0-9]+|[RrCc][0-9]*|[Rr][0-9]*[Cc][0-9]*)$")


def _defined_name(key: str, taken: set[str]) -> str:
    """A valid, unique workbook name for an assumption key.

    ``price_per_kmol:standard`` becomes ``price_per_kmol_standard``.  Letters
    outside ASCII, spaces and punctuation become ``_``; a name that would read
    as a cell reference (``A1``, ``R1C1``) or a logical value gets a leading
    ``_``; names are compared without case, as spreadsheets do.
    """
    name = re.sub(r"[^A-Za-z0-9_.]", "_", key)
    name = re.sub(r"_+", "_", name).strip("_") or "value"
    if not (name[0].isalpha() or name[0] == "_") or _CELL_LIKE.match(name) or \
            name.upper() in ("TRUE", "FALSE"):
        name = "_" + name
    name = name[:240]
    unique, n = name, 2
    while unique.casefold() in taken:
        unique, n = f"{name}_{n}", n + 1
    taken.add(unique.casefold())
    return unique


# ---------------------------------------------------------------------------
# cell writers: text is always text, numbers are numbers, formulas are ours


def _clean_text(value) -> str:
    text = ILLEGAL_CHARACTERS_RE.sub("\ufffd", str(value))
    return text[:MAX_CELL_TEXT]


def _text(ws: Worksheet, row: int, col: int, value, *, bold: bool = False, wrap: bool = False):
    """A text cell that no spreadsheet evaluates, whatever the text begins with."""
    cell = ws.cell(row=row, column=col)
    text = _clean_text(value)
    cell.value = text
    cell.data_type = "s"
    if text.startswith(_FORMULA_START):
        cell.quotePrefix = True
    if bold:
        cell.font = _BOLD
    if wrap:
        cell.alignment = _WRAP
    return cell


def _number(ws: Worksheet, row: int, col: int, value, fmt: str = "General"):
    """A number; None, infinite or NaN are written as the text ``n/a``."""
    if value is None or isinstance(value, bool) or not math.isfinite(float(value)):
        return _text(ws, row, col, "n/a")
    cell = ws.cell(row=row, column=col, value=float(value))
    cell.number_format = fmt
    return cell


def _formula(ws: Worksheet, row: int, col: int, formula: str, fmt: str = "General"):
    """A formula generated by this module (never built from case text)."""
    cell = ws.cell(row=row, column=col, value="=" + formula)
    cell.number_format = fmt
    return cell


def _header(ws: Worksheet, row: int, labels, col: int = 1) -> None:
    for j, label in enumerate(labels):
        cell = _text(ws, row, col + j, label, bold=True, wrap=True)
        cell.fill = _HEADER_FILL
        cell.border = _HEADER_BORDER


def _title(ws: Worksheet, row: int, text: str) -> None:
    _text(ws, row, 1, text).font = _TITLE


def _section(ws: Worksheet, row: int, title: str, rows) -> int:
    """A bold title, then one row per tuple of texts; returns the row after a blank line."""
    _text(ws, row, 1, title, bold=True)
    row += 1
    for texts in rows:
        for col, text in enumerate(texts, start=1):
            _text(ws, row, col, text)
        row += 1
    return row + 1


def _widths(ws: Worksheet, widths: dict[str, float]) -> None:
    for letter, width in widths.items():
        ws.column_dimensions[letter].width = width


def _label(alt: Alternative, refs: _Refs) -> str:
    return f"Alternative {refs.of(alt)}: {alt.name}"


def _has_state(alt: Alternative) -> bool:
    return alt.optimum is not None and alt.optimum.feasible and alt.optimum.state is not None


# ---------------------------------------------------------------------------
# Assumptions


def _assumptions_sheet(wb: Workbook, ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """Every price and economic input in its own named cell.

    Alternatives share one cell per assumption; an alternative whose value
    differs from the one most alternatives use gets its own row and name,
    suffixed ``_alt<number>``, and its formulas use that name.
    """
    _title(ws, 1, "Assumptions: prices and economic inputs (change a yellow cell to re-price "
                  "every alternative)")
    _header(ws, 2, ["Name", "Description", "Value", "Unit", "Source", "Applies to",
                    "Key in the tool"])
    ws.freeze_panes = "A3"
    tables = [(refs.of(a), costs.assumptions(a.loop)) for a in study.alternatives]
    keys = list(dict.fromkeys(k for _, table in tables for k in table))
    taken: set[str] = set()
    row = 3
    for key in keys:
        users = [(i, table[key]) for i, table in tables if key in table]
        counts: dict[float, int] = {}
        for _, a in users:
            counts[a.value] = counts.get(a.value, 0) + 1
        shared = max(counts, key=counts.__getitem__)   # the first of the most used values
        base = _defined_name(key, taken)
        sharing = [i for i, a in users if a.value == shared]
        rows = [(base, next(a for _, a in users if a.value == shared), sharing)]
        rows += [(_defined_name(f"{base}_alt{i}", taken), a, [i])
                 for i, a in users if a.value != shared]
        for name, a, who in rows:
            for i in who:
                refs.names[(i, key)] = name
            if len(who) == len(tables):
                applies = "all alternatives"
            else:
                applies = ("alternative " if len(who) == 1 else "alternatives ") + ", ".join(
                    str(i) for i in who)
            _text(ws, row, 1, name)
            _text(ws, row, 2, a.label)
            _number(ws, row, 3, a.value).fill = _INPUT_FILL
            _text(ws, row, 4, a.unit)
            _text(ws, row, 5, a.source)
            _text(ws, row, 6, applies)
            _text(ws, row, 7, key)
            wb.defined_names[name] = DefinedName(name, attr_text=_address(ASSUMPTIONS, row, 3))
            row += 1
    row += 1
    _text(ws, row, 1, "Each value is a workbook-level defined name (Formulas > Name Manager); "
                      "the cost build-up formulas use these names.", wrap=False)
    _widths(ws, {"A": 38, "B": 46, "C": 16, "D": 14, "E": 14, "F": 22, "G": 36})


# ---------------------------------------------------------------------------
# Cost build-up


def _crf_formula(n, life_key: str = "life_years") -> str:
    """Capital recovery factor over the assumption names (straight line at zero rate).

    CRF = i (1+i)^n / ((1+i)^n - 1); 1/n when i = 0 (Peters, Timmerhaus and
    West, ch. 7); n is the economic life, or ``life_key``'s (the catalyst's).
    """
    i, life = n("discount_rate"), n(life_key)
    return f"IF({i}=0,1/{life},{i}*(1+{i})^{life}/((1+{i})^{life}-1))"


def _line_formula(line: costs.CostLine, qty: str, crf: str, n) -> tuple[str, str]:
    """Spreadsheet formula and its reading for one cost line, as costs.evaluate computes it."""
    if line.kind == "hourly":
        sign = "" if line.sign == 1.0 else "-" if line.sign == -1.0 else f"{line.sign!r}*"
        text = f"{qty}*{n(line.price)}*{n('hours_per_year')}"
        reading = (f"quantity x {n(line.price)} x {n('hours_per_year')}"
                   + (" (a credit)" if line.sign < 0 else ""))
        return sign + text, reading
    if line.kind == "capital":
        p = line.capital
        text = (f"{crf}*{n(p + '_reference_cost')}*{n('cost_index_ratio')}"
                f"*({qty}/{n(p + '_reference_size')})^{n(p + '_exponent')}")
        reading = (f"CRF x {n(p + '_reference_cost')} x {n('cost_index_ratio')} x "
                   f"(quantity / {n(p + '_reference_size')})^{n(p + '_exponent')}")
        if line.factor:
            text += f"*{n(line.factor)}"
            reading += f" x {n(line.factor)}"
        return text, reading
    if line.kind == "replacement":
        return (f"{_crf_formula(n, line.life)}*{qty}*{n(line.price)}",
                f"CRF over {n(line.life)} x quantity x {n(line.price)}")
    raise ValueError(f"cost line {line.key!r}: unknown kind {line.kind!r}")


def _cost_sheet(ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """One block per alternative: quantities as values, annual costs as live formulas."""
    cur = study.currency
    _title(ws, 1, f"Cost build-up at the optimum purge fraction of each alternative "
                  f"(annual costs in {cur}/year follow the Assumptions sheet)")
    _header(ws, 2, ["Item", "Kind", "Quantity", "Quantity unit", f"Annual cost [{cur}/year]",
                    "Recipe (names on the Assumptions sheet)", "Line key"])
    ws.freeze_panes = "A3"
    row = 4
    for alt in study.alternatives:
        row = _cost_block(ws, row, alt, refs, cur) + 1
    _widths(ws, {"A": 52, "B": 12, "C": 18, "D": 14, "E": 20, "F": 78, "G": 30})


def _cost_block(ws: Worksheet, row: int, alt: Alternative, refs: _Refs, cur: str) -> int:
    """Write one alternative's block from ``row``; returns the first free row."""
    i = refs.of(alt)
    rank = f"rank {alt.rank}" if alt.rank is not None else "not ranked"
    _text(ws, row, 1, f"{_label(alt, refs)} ({rank})").font = _TITLE
    row += 1
    if not _has_state(alt):
        opt = alt.optimum
        _text(ws, row, 1, f"No cost build-up: {opt.status.value}: {opt.message}")
        return row + 1
    state = alt.optimum.state

    def n(key: str) -> str:
        return refs.names[(i, key)]

    _text(ws, row, 1, "Purge fraction of the separator vapour")
    _number(ws, row, 3, state.purge_fraction, FMT_FRACTION)
    _text(ws, row, 4, "-")
    _text(ws, row, 6, "optimised; fixed in this workbook")
    row += 1
    crf_row = row
    _text(ws, row, 1, "Capital recovery factor")
    _formula(ws, row, 3, _crf_formula(n), FMT_CRF)
    _text(ws, row, 4, "1/year")
    _text(ws, row, 6, f"{n('discount_rate')} (1+{n('discount_rate')})^{n('life_years')} / "
                      f"((1+{n('discount_rate')})^{n('life_years')} - 1); "
                      f"1/{n('life_years')} at a zero rate")
    row += 1
    crf = f"$C${crf_row}"
    first = row
    for line in costs.cost_lines(alt.loop):
        qty = f"C{row}"
        formula, reading = _line_formula(line, qty, crf, n)
        _text(ws, row, 1, line.label)
        _text(ws, row, 2, line.kind)
        _number(ws, row, 3, state.quantities[line.quantity], FMT_QUANTITY)
        _text(ws, row, 4, line.quantity_unit)
        _formula(ws, row, 5, formula, FMT_MONEY)
        _text(ws, row, 6, reading)
        _text(ws, row, 7, line.key)
        row += 1
    last = row - 1
    tac_row = row
    _text(ws, row, 1, "Total annualised cost (TAC)", bold=True)
    _formula(ws, row, 5, f"SUM(E{first}:E{last})", FMT_MONEY).font = _BOLD
    _text(ws, row, 6, "sum of the lines above")
    refs.tac[i] = _address(COSTS, tac_row, 5)
    row += 1
    _text(ws, row, 1, "Product rate")
    _number(ws, row, 3, state.quantities["product_t_h"], FMT_QUANTITY)
    _text(ws, row, 4, "t/h")
    rate_row = row
    row += 1
    _text(ws, row, 1, "Annual product")
    _formula(ws, row, 3, f"C{rate_row}*{n('hours_per_year')}", FMT_MONEY)
    _text(ws, row, 4, "t/year")
    _text(ws, row, 6, f"product rate x {n('hours_per_year')}")
    refs.tonnes[i] = _address(COSTS, row, 3)
    tonnes_row = row
    row += 1
    _text(ws, row, 1, f"Cost per tonne of product [{cur}/t]", bold=True)
    _formula(ws, row, 5, f"E{tac_row}/C{tonnes_row}", FMT_MONEY_2).font = _BOLD
    _text(ws, row, 6, "TAC / annual product")
    refs.per_tonne[i] = _address(COSTS, row, 5)
    row += 1
    _text(ws, row, 1, "Memo, not included in TAC: value of reactant lost with the purge "
                      "and the liquid product", wrap=True)
    _number(ws, row, 5, state.lost_reactant_memo_per_year, FMT_MONEY).font = Font(italic=True)
    _text(ws, row, 6, "already paid for through the make-up gas price; each reactant at its "
                      "own source price, at the case prices")
    row += 1
    _text(ws, row, 1, "Binding constraints")
    _text(ws, row, 3, ", ".join(alt.optimum.binding_constraints) or "none")
    row += 1
    _text(ws, row, 1, "Warnings")
    _text(ws, row, 3, "; ".join(state.warnings) or "none", wrap=True)
    row = _ratio_rows(ws, row + 1, alt)
    return _inert_limit_rows(ws, row, alt)


def _ratio_rows(ws: Worksheet, row: int, alt: Alternative) -> int:
    """A row per reactor-inlet ratio: its value and how it is held; returns the next row."""
    for name, value in alt.optimum.state.inlet_ratio.items():
        _text(ws, row, 1, f"Reactor-inlet ratio {name}")
        _number(ws, row, 3, value, FMT_RATIO)
        _text(ws, row, 4, "-")
        _text(ws, row, 6, limits.ratio_hold(alt.loop, name))
        row += 1
    return row


#: The events of the time to the inert limit, by their key in the results.
INERT_LIMIT_EVENTS = (("purge_closed", "purge closed"),
                      ("recovery_down", "recovery unit down"))


def _inert_limit_rows(ws: Worksheet, row: int, alt: Alternative) -> int:
    """Hours to the inert limit after each event that applies; returns the next row."""
    hours = alt.optimum.time_to_inert_limit_h or {}
    if hours and all(v is None for v in hours.values()):
        _text(ws, row, 1, "Hours to the inert limit")
        _text(ws, row, 3, "n/a")
        _text(ws, row, 4, "h")
        _text(ws, row, 6, "needs a loop gas inventory, an inert limit and inerts in the feed")
        return row + 1
    for key, label in INERT_LIMIT_EVENTS:
        value = hours.get(key)
        if value is None:
            continue
        _text(ws, row, 1, f"Hours to the inert limit, {label}")
        if math.isinf(value):
            _text(ws, row, 3, "never")
            _text(ws, row, 6, "the inert level settles below the limit")
        else:
            _number(ws, row, 3, value, FMT_HOURS)
            _text(ws, row, 6, "from the optimum, production held")
        _text(ws, row, 4, "h")
        row += 1
    return row


# ---------------------------------------------------------------------------
# Ranking


def _ranking_sheet(ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """All alternatives, ranked ones first; TAC and cost per tonne follow the cost sheet."""
    cur = study.currency
    _header(ws, 1, ["Rank", "Alternative", "No.", "Choices", "Purge fraction [-]",
                    "Inert mole fraction at reactor inlet (setpoint) [-]",
                    "Per-pass conversion of key reactant [-]", "Overall conversion [-]",
                    f"TAC [{cur}/year]", f"Cost per tonne of product [{cur}/t]", "Feasible",
                    "Status", "Message", "Binding constraints"])
    ws.freeze_panes = "C2"
    ws.row_dimensions[1].height = 45
    for row, alt in enumerate(study.alternatives, start=2):
        i = refs.of(alt)
        if alt.rank is not None:
            _number(ws, row, 1, alt.rank, "0")
        else:
            _text(ws, row, 1, "-")
        _text(ws, row, 2, alt.name)
        _number(ws, row, 3, i, "0")
        _text(ws, row, 4, "; ".join(f"{k}={v}" for k, v in sorted(alt.choices.items())))
        opt = alt.optimum
        if _has_state(alt):
            s = opt.state
            _number(ws, row, 5, s.purge_fraction, FMT_FRACTION)
            _number(ws, row, 6, s.inert_fraction_reactor_inlet, FMT_FRACTION)
            _number(ws, row, 7, s.first_reaction_conversion, FMT_FRACTION)
            _number(ws, row, 8, s.overall_conversion, FMT_FRACTION)
            _formula(ws, row, 9, refs.tac[i], FMT_MONEY)
            _formula(ws, row, 10, f"I{row}/{refs.tonnes[i]}", FMT_MONEY_2)
        _text(ws, row, 11, "yes" if opt.feasible else "no")
        _text(ws, row, 12, opt.status.value)
        _text(ws, row, 13, "" if opt.feasible else opt.message)
        _text(ws, row, 14, ", ".join(opt.binding_constraints))
    row = len(study.alternatives) + 3
    _text(ws, row, 1, "Ranked by TAC at the case prices. TAC and cost per tonne re-price with "
                      "the Assumptions sheet at the same purge fractions; the ranking itself "
                      "is not redone in the workbook.")
    _widths(ws, {"A": 7, "B": 34, "C": 5, "D": 44, "E": 12, "F": 16, "G": 14, "H": 12,
                 "I": 16, "J": 14, "K": 9, "L": 11, "M": 60, "N": 30})


# ---------------------------------------------------------------------------
# Summary


def _summary_sheet(ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """The answer in a sentence, the key figures, the break-even premiums and the cautions."""
    cur = study.currency
    _title(ws, 1, "Purge optimisation study")
    ws.freeze_panes = "A2"
    _text(ws, 2, 1, "Case")
    _text(ws, 2, 2, study.case_name)
    ranked = study.ranked
    best = study.best
    _text(ws, 4, 1, _answer(study), wrap=True).font = Font(bold=True)
    ws.merge_cells(start_row=4, start_column=1, end_row=4, end_column=8)
    ws.row_dimensions[4].height = 64
    row = 6
    _header(ws, row, ["Key figure", "Value", "Unit", "Note"])
    row += 1
    if best is not None:
        i = refs.of(best)
        s = best.optimum.state
        figures = [
            ("Best alternative", ("text", best.name), "", f"alternative {i}"),
            ("Optimal purge fraction", ("num", s.purge_fraction, FMT_FRACTION), "-",
             "of the separator vapour"),
            ("Inert mole fraction at reactor inlet (inert setpoint)",
             ("num", s.inert_fraction_reactor_inlet, FMT_FRACTION), "-",
             "the level operations control the purge to"),
            ("TAC of the best alternative", ("formula", refs.tac[i], FMT_MONEY),
             f"{cur}/year", "follows the Assumptions sheet"),
            ("Cost per tonne of product", ("formula", refs.per_tonne[i], FMT_MONEY_2),
             f"{cur}/t", "follows the Assumptions sheet"),
        ]
        if len(ranked) > 1:
            j = refs.of(ranked[1])
            figures += [
                ("Runner-up", ("text", ranked[1].name), "", f"alternative {j}"),
                ("TAC of the runner-up", ("formula", refs.tac[j], FMT_MONEY), f"{cur}/year",
                 "follows the Assumptions sheet"),
                ("Saving against the runner-up",
                 ("formula", f"{refs.tac[j]}-{refs.tac[i]}", FMT_MONEY), f"{cur}/year",
                 "runner-up TAC minus best TAC"),
            ]
        for label, value, unit, note in figures:
            _text(ws, row, 1, label)
            if value[0] == "text":
                _text(ws, row, 2, value[1])
            elif value[0] == "num":
                _number(ws, row, 2, value[1], value[2])
            else:
                _formula(ws, row, 2, value[1], value[2])
            _text(ws, row, 3, unit)
            _text(ws, row, 4, note)
            row += 1
    _text(ws, row, 1, "The purge fractions and the ranking are optimised at the case prices; "
                      "changing a price in the workbook re-prices these operating points but "
                      "does not re-optimise or re-rank.")
    row += 2
    row = _break_even_table(ws, row, study) + 1
    _text(ws, row, 1, "Cautions", bold=True)
    row += 1
    for line in CAUTIONS:
        _text(ws, row, 1, line)
        row += 1
    _widths(ws, {"A": 50, "B": 26, "C": 18, "D": 28, "E": 14, "F": 14, "G": 14, "H": 14,
                 "I": 12, "J": 18, "K": 40})


def _answer(study: StudyResult) -> str:
    """The study's answer as one sentence (figures at the case prices)."""
    cur = study.currency
    best = study.best
    if best is None:
        return ("No alternative meets the specification; the Ranking sheet gives the reason "
                "for each.")
    s = best.optimum.state
    text = (f"Best alternative: {best.name}. Purge {s.purge_fraction:.4g} of the separator "
            f"vapour ({100 * s.purge_fraction:.3g} %), which holds the inert mole fraction at "
            f"the reactor inlet at {s.inert_fraction_reactor_inlet:.4g} (the inert setpoint); "
            f"TAC {s.tac_per_year:,.0f} {cur}/year.")
    ranked = study.ranked
    if len(ranked) > 1:
        other = ranked[1]
        saving = other.optimum.state.tac_per_year - s.tac_per_year
        text += (f" That is {saving:,.0f} {cur}/year "
                 f"({100 * saving / other.optimum.state.tac_per_year:.3g} %) less than the "
                 f"runner-up, {other.name}.")
    else:
        text += " No other alternative is feasible."
    return text


def _break_even_table(ws: Worksheet, row: int, study: StudyResult) -> int:
    cur = study.currency
    _text(ws, row, 1, "Break-even premium for purer make-up gas", bold=True)
    row += 1
    _text(ws, row, 1, "Price of each purer grade at which its best alternative's TAC equals "
                      "that of the base grade's best alternative, each re-optimised at the "
                      "trial price (values at the case prices).")
    row += 1
    if not study.break_even:
        _text(ws, row, 1, "No break-even: fewer than two single-source make-up grades among "
                          "the feasible alternatives.")
        return row + 1
    _header(ws, row, ["Purer grade", "Base grade", "Alternative (purer grade)",
                      "Base alternative", f"Base price [{cur}/kmol]",
                      f"Grade price [{cur}/kmol]", f"Tie price [{cur}/kmol]",
                      f"Premium [{cur}/kmol]", "Premium [%]", f"TAC at tie [{cur}/year]",
                      "Note"])
    row += 1
    for entry in study.break_even:
        _text(ws, row, 1, entry.grade)
        _text(ws, row, 2, entry.base_grade)
        _text(ws, row, 3, entry.alternative)
        _text(ws, row, 4, entry.base_alternative)
        _number(ws, row, 5, entry.base_price_per_kmol, "0.0000")
        _number(ws, row, 6, entry.grade_price_per_kmol, "0.0000")
        _number(ws, row, 7, entry.tie_price_per_kmol, "0.000000")
        _number(ws, row, 8, entry.premium_per_kmol, "0.000000")
        _number(ws, row, 9, entry.premium_percent, FMT_PERCENT)
        _number(ws, row, 10, entry.tac_at_tie_per_year, FMT_MONEY)
        _text(ws, row, 11, entry.note or "")
        row += 1
    return row


# ---------------------------------------------------------------------------
# Streams


def _streams_sheet(ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """Per alternative: component flows of every stream at the optimum, then mole fractions."""
    _title(ws, 1, "Stream tables at the optimum purge fraction (flows in kmol/h)")
    ws.freeze_panes = "B2"
    row = 3
    widest = 1
    for alt in study.alternatives:
        _text(ws, row, 1, _label(alt, refs)).font = _TITLE
        row += 1
        if not _has_state(alt):
            _text(ws, row, 1, f"No steady state to show: {alt.optimum.status.value}: "
                              f"{alt.optimum.message}")
            row += 2
            continue
        loop, flows = alt.loop, alt.optimum.state.flows
        streams = [s for s in (loop.streams or tuple(flows)) if s in flows]
        widest = max(widest, len(streams) + 1)
        _text(ws, row, 1, f"Loop pressure {loop.pressure_bar:g} bar abs; the loop loses "
                          f"{loop.pressure_drop_bar:g} bar, made up by the recycle compressor.")
        row += 1
        for unit, values in (("kmol/h", _flow_table(loop, flows, streams)),
                             ("-", _fraction_table(loop, flows, streams))):
            title = "Flow" if unit == "kmol/h" else "Mole fraction"
            _header(ws, row, [f"Component ({title.lower()}) [{unit}]"]
                    + [f"{STREAM_LABELS.get(s, s)} [{unit}]" for s in streams])
            row += 1
            if unit == "kmol/h":
                conditions = stream_conditions(loop)
                for k, label in enumerate(("Pressure [bar abs]", "Temperature [degC]")):
                    _text(ws, row, 1, label)
                    for j, s in enumerate(streams, start=2):
                        _number(ws, row, j, conditions[s][k], "0.0")
                    row += 1
            fmt = FMT_QUANTITY if unit == "kmol/h" else FMT_FRACTION
            for label, numbers in values:
                _text(ws, row, 1, label, bold=label == "Total")
                for j, v in enumerate(numbers, start=2):
                    _number(ws, row, j, v, fmt)
                row += 1
            row += 1
        row += 1
    ws.column_dimensions["A"].width = 34
    for j in range(2, widest + 2):
        ws.column_dimensions[get_column_letter(j)].width = 17


def _flow_table(loop, flows, streams):
    rows = [(c, [flows[s][c] for s in streams]) for c in loop.components]
    rows.append(("Total", [sum(flows[s][c] for c in loop.components) for s in streams]))
    return rows


def _fraction_table(loop, flows, streams):
    totals = [sum(flows[s][c] for c in loop.components) for s in streams]
    rows = [(c, [flows[s][c] / t if t > 0 else None for s, t in zip(streams, totals,
                                                                      strict=True)])
            for c in loop.components]
    rows.append(("Total", [1.0 if t > 0 else None for t in totals]))
    return rows


# ---------------------------------------------------------------------------
# Cost curves


def _curves_sheet(ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """Per alternative: TAC against purge fraction around the optimum, table and chart."""
    cur = study.currency
    _title(ws, 1, f"Cost curves: TAC against purge fraction around each optimum, at the case "
                  f"prices (values; TAC in {cur}/year)")
    ws.freeze_panes = "A2"
    row = 3
    for alt in study.alternatives:
        _text(ws, row, 1, _label(alt, refs)).font = _TITLE
        row += 1
        curve = alt.optimum.curve if _has_state(alt) else []
        if not curve:
            _text(ws, row, 1, "No cost curve: " + (
                f"{alt.optimum.status.value}: {alt.optimum.message}" if not _has_state(alt)
                else "not computed"))
            row += 2
            continue
        _header(ws, row, ["Purge fraction [-]", f"TAC [{cur}/year]"])
        first = row + 1
        for k, point in enumerate(curve):
            _number(ws, first + k, 1, point.purge_fraction, FMT_FRACTION)
            _number(ws, first + k, 2, point.tac_per_year, FMT_MONEY)
        last = first + len(curve) - 1
        opt_row = last + 2
        s = alt.optimum.state
        _text(ws, opt_row - 1, 1, "Optimum", bold=True)
        _number(ws, opt_row, 1, s.purge_fraction, FMT_FRACTION)
        _number(ws, opt_row, 2, s.tac_per_year, FMT_MONEY)
        ws.add_chart(_curve_chart(ws, refs.of(alt), first, last, opt_row, curve, cur),
                     f"D{row}")
        row = max(opt_row + 2, row + 22)
    _widths(ws, {"A": 18, "B": 20})


def _curve_chart(ws, number: int, first: int, last: int, opt_row: int, curve, cur):
    chart = ScatterChart()
    chart.title = f"Alternative {number}: TAC against purge fraction"
    chart.style = 13
    chart.height, chart.width = 10, 18
    chart.x_axis.title = "Purge fraction [-] (log scale)"
    chart.y_axis.title = f"TAC [{cur}/year]"
    chart.x_axis.scaling.logBase = 10
    xs = [p.purge_fraction for p in curve]
    ys = [p.tac_per_year for p in curve]
    chart.x_axis.scaling.min, chart.x_axis.scaling.max = min(xs), max(xs)
    pad = 0.05 * (max(ys) - min(ys)) or 0.001 * abs(max(ys)) or 1.0
    chart.y_axis.scaling.min, chart.y_axis.scaling.max = min(ys) - pad, max(ys) + pad
    chart.y_axis.number_format = FMT_MONEY
    chart.x_axis.number_format = "0.0000"
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    line = Series(Reference(ws, min_col=2, min_row=first, max_row=last),
                  Reference(ws, min_col=1, min_row=first, max_row=last), title="TAC")
    line.marker.symbol = "circle"
    line.marker.size = 4
    line.smooth = False
    line.graphicalProperties.line.width = 19050     # 1.5 pt
    point = Series(Reference(ws, min_col=2, min_row=opt_row),
                   Reference(ws, min_col=1, min_row=opt_row), title="Optimum")
    point.marker.symbol = "diamond"
    point.marker.size = 11
    point.graphicalProperties.line.noFill = True
    chart.series.extend([line, point])
    return chart


# ---------------------------------------------------------------------------
# Sensitivity


def _sensitivity_sheet(ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """Each lever moved low and high with re-optimisation; swings chart; off-optimum cost."""
    cur = study.currency
    frac = study.sensitivity_fraction
    _title(ws, 1, f"Sensitivity: each lever moved by -{100 * frac:g} % and +{100 * frac:g} % "
                  f"with every alternative re-optimised (TAC in {cur}/year, values)")
    ws.freeze_panes = "B4"
    rows = study.sensitivity
    names = list(dict.fromkeys(n for r in rows for n in r.tac))
    numbers = {n: refs.by_name(n) for n in names}
    row = 3
    header = ["Lever", "Description", "Low factor [-]", "High factor [-]",
              "Low factor applied [-]", "High factor applied [-]"]
    for n in names:
        header += [f"Alt. {numbers[n]} TAC at low [{cur}/year]",
                   f"Alt. {numbers[n]} TAC at base [{cur}/year]",
                   f"Alt. {numbers[n]} TAC at high [{cur}/year]"]
    header += ["Best at low", "Best at high", "Best changes", "Note"]
    _header(ws, row, header)
    ws.row_dimensions[row].height = 45
    row += 1
    for r in rows:
        _text(ws, row, 1, r.lever)
        _text(ws, row, 2, r.label)
        _number(ws, row, 3, r.low_factor, FMT_FACTOR)
        _number(ws, row, 4, r.high_factor, FMT_FACTOR)
        _number(ws, row, 5, r.low_factor_applied, FMT_FACTOR_APPLIED)
        _number(ws, row, 6, r.high_factor_applied, FMT_FACTOR_APPLIED)
        col = 7
        for n in names:
            swing = r.tac[n] if n in r.tac else None
            for side in ("low", "base", "high"):
                _number(ws, row, col, getattr(swing, side) if swing else None, FMT_MONEY)
                col += 1
        _text(ws, row, col, r.best_at_low or "n/a")
        _text(ws, row, col + 1, r.best_at_high or "n/a")
        _text(ws, row, col + 2, "yes" if r.best_changes else "no")
        _text(ws, row, col + 3, r.note or "")
        row += 1
    if not rows:
        _text(ws, row, 1, "No sensitivity was run.")
        row += 1
    row += 1
    _text(ws, row, 1, "Alternatives above", bold=True)
    row += 1
    for n in names:
        _text(ws, row, 1, f"Alt. {numbers[n]}")
        _text(ws, row, 2, n)
        row += 1
    row = _swings(ws, row + 1, study, refs) + 1
    _off_optimum_table(ws, row, study, refs)
    widths = {"A": 24, "B": 44, "C": 11, "D": 11, "E": 11, "F": 11}
    for j in range(7, 7 + 3 * len(names) + 3):
        widths[get_column_letter(j)] = 17
    widths[get_column_letter(7 + 3 * len(names) + 3)] = 60
    _widths(ws, widths)


def _swings(ws: Worksheet, row: int, study: StudyResult, refs: _Refs) -> int:
    """Swings of the best alternative's TAC (low - base, high - base) and a bar chart."""
    cur = study.currency
    best = study.best
    data = [r for r in study.sensitivity if best is not None and best.name in r.tac]
    if not data:
        return row
    _text(ws, row, 1, f"Swing of the best alternative's TAC ({_label(best, refs)})", bold=True)
    row += 1
    head = row
    _header(ws, row, ["Lever", f"Low - base [{cur}/year]", f"High - base [{cur}/year]"])
    row += 1
    for r in data:
        swing = r.tac[best.name]
        _text(ws, row, 1, r.label)
        for col, v in ((2, swing.low), (3, swing.high)):
            _number(ws, row, col, None if v is None else v - swing.base, FMT_MONEY)
        row += 1
    chart = BarChart()
    chart.type = "bar"
    chart.grouping = "clustered"
    chart.overlap = 100
    chart.title = "Swing of the best alternative's TAC"
    chart.x_axis.title = "Lever"
    chart.y_axis.title = f"Change in TAC [{cur}/year]"
    chart.y_axis.number_format = FMT_MONEY
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.height, chart.width = 10, 20
    chart.add_data(Reference(ws, min_col=2, max_col=3, min_row=head, max_row=row - 1),
                   titles_from_data=True)
    chart.set_categories(Reference(ws, min_col=1, min_row=head + 1, max_row=row - 1))
    ws.add_chart(chart, f"E{head}")
    return max(row, head + 22)


def _off_optimum_table(ws: Worksheet, row: int, study: StudyResult, refs: _Refs) -> int:
    cur = study.currency
    _text(ws, row, 1, "Cost of running off the optimum (values at the case prices)", bold=True)
    row += 1
    _header(ws, row, ["Alternative", "Name", "Optimal purge fraction [-]",
                      f"TAC at optimum [{cur}/year]", f"TAC at half the purge [{cur}/year]",
                      f"Extra at half [{cur}/year]", f"TAC at twice the purge [{cur}/year]",
                      f"Extra at twice [{cur}/year]", "1 % band: lowest purge fraction [-]",
                      "1 % band: highest purge fraction [-]"])
    ws.row_dimensions[row].height = 45
    row += 1
    for alt in study.alternatives:
        _text(ws, row, 1, f"Alt. {refs.of(alt)}")
        _text(ws, row, 2, alt.name)
        if not _has_state(alt):
            _text(ws, row, 3, "n/a")
            row += 1
            continue
        s = alt.optimum.state
        off = alt.optimum.off_optimum
        _number(ws, row, 3, s.purge_fraction, FMT_FRACTION)
        _number(ws, row, 4, s.tac_per_year, FMT_MONEY)
        sides = (off.tac_half_purge_per_year, off.tac_double_purge_per_year) if off else (None,) * 2
        for col, v in zip((5, 7), sides, strict=True):
            _number(ws, row, col, v, FMT_MONEY)
            extra = v - s.tac_per_year if v is not None and math.isfinite(v) else None
            _number(ws, row, col + 1, extra, FMT_MONEY)
        band = off.band_1pct_purge_fraction if off else (None, None)
        _number(ws, row, 9, band[0], FMT_FRACTION)
        _number(ws, row, 10, band[1], FMT_FRACTION)
        row += 1
    _text(ws, row, 1, "n/a: outside the allowed purge range, or no steady state there. The 1 % "
                      "band is the range of purge fractions within 1 % of the lowest TAC.")
    return row + 1


# ---------------------------------------------------------------------------
# Notes


def _notes_sheet(ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """Method, solver status, provenance, units and the cautions."""
    _title(ws, 1, "Notes")
    ws.freeze_panes = "A2"
    row = _section(ws, 3, "Study", (
        ("Case", study.case_name), ("Case file SHA-256", study.case_sha256),
        ("Tool", f"purgeplan {study.tool_version}"), ("Created (UTC)", study.created),
        ("Currency", study.currency),
        ("Sensitivity step", f"+/- {100 * study.sensitivity_fraction:g} %")))
    _text(ws, row, 1, "Method and solver status per alternative", bold=True)
    row += 1
    _header(ws, row, ["Alternative", "Name", "Solver", "Status", "Solves", "Seconds [s]",
                      "Method", "Message"])
    row += 1
    for alt in study.alternatives:
        info = alt.optimum.solver
        _text(ws, row, 1, f"Alt. {refs.of(alt)}")
        _text(ws, row, 2, alt.name)
        _text(ws, row, 3, info.name)
        _text(ws, row, 4, info.status)
        _number(ws, row, 5, info.solves, "0")
        _number(ws, row, 6, info.seconds, "0.000")
        _text(ws, row, 7, info.method, wrap=True)
        _text(ws, row, 8, alt.optimum.message, wrap=True)
        row += 1
    row = _section(ws, row + 1, "How the costs are built", [(line,) for line in (
        "hourly lines: sign x quantity [unit/h] x price [currency/unit] x hours_per_year.",
        "capital lines: CRF x reference_cost x cost_index_ratio x (quantity / reference_size)"
        "^exponent; CRF = i (1+i)^n / ((1+i)^n - 1), 1/n at i = 0 (Peters, Timmerhaus and "
        "West, ch. 7; capacity scaling, Turton et al., eq. 7.1).",
        "replacement lines: CRF over the item's own life x quantity x price (catalyst "
        "replacement: a charge bought every catalyst life, annualised like the capital).",
        "capital lines with a factor: the reactor's vessel pressure factor at loop pressure "
        "over that at the reference pressure (Turton et al., eq. 7.10).",
        "The make-up gas price already pays for the reactant lost with the purge and the "
        "liquid product; its value, each reactant at its own source price, is shown as a "
        "memo and not added to TAC.",
        "Quantities (flows, powers, volumes) are values at the optimum; costs are formulas "
        "over the Assumptions sheet. Cost curves, sensitivity, break-even and off-optimum "
        "figures are values at the case prices.")])
    row = _section(ws, row, "Units", UNITS)
    _section(ws, row, "Cautions", [(line,) for line in CAUTIONS])
    _widths(ws, {"A": 22, "B": 40, "C": 10, "D": 12, "E": 9, "F": 11, "G": 90, "H": 60})
