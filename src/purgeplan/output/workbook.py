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

import io
import logging
import math
import re
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from xml.sax.saxutils import escape as xml_escape

from openpyxl import Workbook
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE
from openpyxl.chart import BarChart, Reference, ScatterChart, Series
from openpyxl.chart.label import DataLabelList
from openpyxl.chart.series import SeriesLabel, StrRef
from openpyxl.formatting.rule import FormulaRule
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter, quote_sheetname
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.pagebreak import Break
from openpyxl.worksheet.worksheet import Worksheet

from .. import costs, limits
from ..cautions import CAUTIONS
from ..equations import stream_conditions
from ..study import Alternative, StudyResult, break_even_words, levers_changing_best
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
MATRIX = "Cost matrix"
SHEETS = (SUMMARY, RANKING, MATRIX, ASSUMPTIONS, COSTS, STREAMS, CURVES, SENSITIVITY, NOTES)

UNITS = (
    ("-", "dimensionless (ratios, factors, exponents)"),
    ("%", "per cent: purge fractions and conversions shown as percentages"),
    ("mol %", "mole per cent (mole fractions, the inert setpoint)"),
    ("kmol/h", "kilomoles per hour"),
    ("kW", "kilowatt of shaft power, or of heat (cooling and refrigeration duties)"),
    ("kWh", "kilowatt hour"),
    ("m3", "cubic metre (catalyst volume)"),
    ("GJ/h", "gigajoule per hour: of lower heating value (gas burned), or of heat taken by "
     "cooling water"),
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
FMT_PCT = "0.000%"
FMT_FLOW = "#,##0.0"
FMT_MATRIX = "#,##0.000;-#,##0.000;0.000"
FMT_PCT_2 = "0.00%"

MAX_CELL_TEXT = 32767
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\n")
_BOLD = Font(bold=True)
_TITLE = Font(bold=True, size=13)
_HEADER_FILL = PatternFill("solid", fgColor="DDE4EE")
_INPUT_FILL = PatternFill("solid", fgColor="FFF2CC")
_GOOD_FILL = PatternFill("solid", fgColor="E2F0D9", bgColor="E2F0D9")
_BAD_FILL = PatternFill("solid", fgColor="F8D7DA", bgColor="F8D7DA")
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
    write_atomically(path, lambda target: save_with_results(wb, target))
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
    _matrix_sheet(wb[MATRIX], study, refs)
    _streams_sheet(wb[STREAMS], study, refs)
    _curves_sheet(wb[CURVES], study, refs)
    _sensitivity_sheet(wb[SENSITIVITY], study, refs)
    _notes_sheet(wb[NOTES], study, refs)
    if study.uncertainty is not None:
        from .uncertainty_out import add_uncertainty_sheet

        add_uncertainty_sheet(wb, study.uncertainty, study.currency,
                              {a.name: a.title for a in study.alternatives})
    for ws in wb.worksheets:
        _fit_row_heights(ws)
        _page_setup(ws, study)
    return wb


# ---------------------------------------------------------------------------
# layout and paper

#: Height of one line of 11-point text [points], and characters per unit of column width
#: (a unit is the width of a digit; text averages a little narrower).
LINE_POINTS = 15.0
_CHARS_PER_WIDTH = 1.1


def _text_lines(text: str, width: float) -> int:
    """Lines a wrapped text takes in a cell ``width`` characters wide (whole words wrap)."""
    import textwrap

    room = max(1, int(width * _CHARS_PER_WIDTH) - 1)
    return sum(max(1, len(textwrap.wrap(part, room, break_long_words=True)))
               for part in str(text).split("\n"))


def _fit_row_heights(ws: Worksheet) -> None:
    """Row heights that fit every wrapped text cell (merged cells over their whole width).

    The width of a column comes from its setting (8.43 characters by
    default); a character of 11-point text is about one unit of width, a line
    about 15 points high, and a title line 18.
    """
    spans = {}
    for rng in ws.merged_cells.ranges:
        spans[(rng.min_row, rng.min_col)] = range(rng.min_col, rng.max_col + 1)

    def width(col: int) -> float:
        dim = ws.column_dimensions.get(get_column_letter(col))
        return dim.width if dim is not None and dim.width else 8.43

    needed: dict[int, float] = {}
    for row in ws.iter_rows():
        for cell in row:
            if cell.value is None or not (cell.alignment and cell.alignment.wrap_text):
                continue
            cols = spans.get((cell.row, cell.column), range(cell.column, cell.column + 1))
            text = cell.value
            if isinstance(text, str) and text.startswith("="):
                text = _results(ws.parent).get((ws.title, cell.coordinate), "")
            size = (cell.font.sz or 11) if cell.font else 11
            lines = _text_lines(text, sum(width(c) for c in cols) * 11 / size)
            needed[cell.row] = max(needed.get(cell.row, 0), lines * LINE_POINTS * size / 11)
    for r, height in needed.items():
        if height > LINE_POINTS:
            ws.row_dimensions[r].height = math.ceil(height + 2)
            for cell in ws[r]:         # labels and values line up with wrapped text
                if cell.value is not None and cell.alignment.vertical is None:
                    cell.alignment = Alignment(horizontal=cell.alignment.horizontal,
                                               vertical="top")


def _header_footer_text(text: str) -> str:
    """Case text for a page header: ``&`` doubled so it is not read as a code."""
    return _clean_text(text).replace("&", "&&")[:200]


def _page_setup(ws: Worksheet, study: StudyResult) -> None:
    """Landscape A4, one page wide, the header rows repeated, case, date and page printed."""
    ws.page_setup.orientation = "landscape"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.print_options.gridLines = False
    ws.page_margins.left = ws.page_margins.right = 0.5
    ws.page_margins.top = ws.page_margins.bottom = 0.75
    ws.page_margins.header = ws.page_margins.footer = 0.3
    ws.oddHeader.left.text = _header_footer_text(study.case_name)
    ws.oddHeader.right.text = _header_footer_text(f"{ws.title}, purgeplan study")
    ws.oddFooter.left.text = _header_footer_text(f"Created {study.created}") + ", printed &D"
    ws.oddFooter.right.text = "Page &P of &N"
    if not ws.print_title_rows:
        ws.print_title_rows = "1:1"
    if ws.title == SUMMARY:
        ws.page_setup.fitToHeight = 1       # the decision on one page


# ---------------------------------------------------------------------------
# cross-sheet bookkeeping


@dataclass
class _Refs:
    """Alternative numbers, defined names and the addresses of cells other sheets point at.

    Alternatives are numbered by their code (A1 is 1), the number ``check``
    gives them; the Ranking sheet lists them in that order.
    """

    study: StudyResult
    number: dict[int, int] = field(default_factory=dict)     # id(alt) -> code number
    names: dict[tuple[int, str], str] = field(default_factory=dict)  # (number, key) -> name
    tac: dict[int, str] = field(default_factory=dict)         # number -> absolute address
    tonnes: dict[int, str] = field(default_factory=dict)      # number -> annual product cell
    per_tonne: dict[int, str] = field(default_factory=dict)
    present_tac: dict[int, str] = field(default_factory=dict)
    lines: dict[tuple[int, str], str] = field(default_factory=dict)  # (number, line key) -> cell
    used: set[str] = field(default_factory=set)               # assumption keys formulas use
    order: list[Alternative] = field(default_factory=list)    # by code number
    by_rank: list[Alternative] = field(default_factory=list)  # ranked first, at the case prices
    inputs: tuple[int, int] = (3, 2)                          # first and last input row

    def __post_init__(self):
        alts = self.study.alternatives
        codes = [re.fullmatch(r"A([0-9]+)", a.code or "") for a in alts]
        numbers = [int(m.group(1)) for m in codes if m]
        if len(numbers) != len(alts) or len(set(numbers)) != len(numbers):
            numbers = list(range(1, len(alts) + 1))     # no codes: by position
        for alt, i in zip(alts, numbers, strict=True):
            self.number[id(alt)] = i
        self.order = sorted(alts, key=self.of)
        self.by_rank = sorted(alts, key=lambda a: (a.rank is None, a.rank or 0, self.of(a)))
        ranked = len(self.study.ranked)
        #: Ranking sheet: the live ranked view from row 5, the alternatives below it.
        self.view_first = 5
        self.table_head = self.view_first + max(ranked, 1) + 2
        self.table_first = self.table_head + 1
        self.table_last = self.table_first + len(alts) - 1

    def of(self, alt: Alternative) -> int:
        return self.number[id(alt)]

    def by_name(self, name: str) -> int | None:
        return next((self.of(a) for a in self.study.alternatives if a.name == name), None)

    def title(self, alt: Alternative) -> str:
        """"A5 blend gas, purge to fuel, membrane": the code and the alternative in words."""
        return f"A{self.of(alt)} {alt.label or alt.name}"

    def row(self, alt: Alternative) -> int:
        """The alternative's row in the Ranking sheet's table of alternatives."""
        return self.table_first + self.order.index(alt)

    def column(self, letter: str) -> str:
        """A column of the Ranking sheet's table of alternatives, as an absolute range."""
        return (f"{quote_sheetname(RANKING)}!${letter}${self.table_first}:"
                f"${letter}${self.table_last}")

    def pick(self, letter: str, rank: int) -> str:
        """The cell of ``letter`` of the alternative ranked ``rank`` at the workbook's prices."""
        return f"INDEX({self.column(letter)},MATCH({rank},{self.column(RANK_NOW)},0))"


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


def _formula(ws: Worksheet, row: int, col: int, formula: str, fmt: str = "General",
             value=None):
    """A formula generated by this module (never built from case text).

    ``value`` is its result at the case prices, stored with the formula
    (see :func:`save_with_results`); None stores no result.
    """
    cell = ws.cell(row=row, column=col, value="=" + formula)
    cell.number_format = fmt
    if value is not None and not (isinstance(value, float) and not math.isfinite(value)):
        _results(ws.parent)[(ws.title, cell.coordinate)] = value
    return cell


def _results(wb: Workbook) -> dict:
    """The stored results of a workbook's formulas, by (sheet title, cell)."""
    if not hasattr(wb, "_purgeplan_results"):
        wb._purgeplan_results = {}
    return wb._purgeplan_results


_FORMULA_CELL = re.compile(r'<c r="([A-Z]+[0-9]+)"([^>]*)><f>(.*?)</f><v\s*/></c>', re.S)


def _with_results(xml: str, results: dict) -> str:
    """A sheet's XML with each formula's stored result (``<v>``) filled in."""
    def fill(m: re.Match) -> str:
        ref, attrs, formula = m.groups()
        if ref not in results:
            return m.group(0)
        value = results[ref]
        if isinstance(value, bool):
            kind, text = ' t="b"', "1" if value else "0"
        elif isinstance(value, int | float):
            kind, text = "", repr(float(value))
        else:
            kind, text = ' t="str"', xml_escape(_clean_text(value))
        attrs = re.sub(r'\s+t="[^"]*"', "", attrs)
        return f'<c r="{ref}"{attrs}{kind}><f>{formula}</f><v>{text}</v></c>'
    return _FORMULA_CELL.sub(fill, xml)


def save_with_results(wb: Workbook, target) -> None:
    """Save the workbook with every formula's result at the case prices stored beside it.

    openpyxl writes formulas without results; a reader that does not
    calculate (a file previewer, pandas, openpyxl with ``data_only=True``)
    would see blank cells.  The results the tool computed are written into
    each formula cell's value, as a spreadsheet application stores them; the
    formulas stay, and the workbook asks to be recalculated on opening.
    """
    buffer = io.BytesIO()
    wb.save(buffer)
    results = _results(wb)
    by_sheet: dict[str, dict] = {}
    for (title, ref), value in results.items():
        by_sheet.setdefault(title, {})[ref] = value
    parts = {f"xl/worksheets/sheet{i}.xml": by_sheet.get(ws.title, {})
             for i, ws in enumerate(wb.worksheets, start=1)}
    out = io.BytesIO()
    with zipfile.ZipFile(buffer) as src, zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as dst:
        for item in src.infolist():
            data = src.read(item.filename)
            if parts.get(item.filename):
                data = _with_results(data.decode("utf-8"), parts[item.filename]).encode("utf-8")
            dst.writestr(item, data)
    data = out.getvalue()
    if hasattr(target, "write"):
        target.write(data)
    else:
        Path(target).write_bytes(data)


def _header(ws: Worksheet, row: int, labels, col: int = 1) -> None:
    for j, label in enumerate(labels):
        cell = _text(ws, row, col + j, label, bold=True, wrap=True)
        cell.fill = _HEADER_FILL
        cell.border = _HEADER_BORDER


def _title(ws: Worksheet, row: int, text: str) -> None:
    _text(ws, row, 1, text).font = _TITLE


def _section(ws: Worksheet, row: int, title: str, rows, span: int = 8) -> int:
    """A bold title, then one row per tuple of texts; returns the row after a blank line.

    A row of one text is wrapped across ``span`` columns; in a row of several
    the last text is wrapped across the columns left.
    """
    _text(ws, row, 1, title, bold=True)
    row += 1
    for texts in rows:
        for col, text in enumerate(texts, start=1):
            _text(ws, row, col, text, wrap=col == len(texts))
        if len(texts) < span:
            ws.merge_cells(start_row=row, start_column=len(texts), end_row=row,
                           end_column=span)
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


def _used_keys(loop) -> set[str]:
    """The assumption keys the workbook's formulas use for this loop."""
    used = {"discount_rate", "life_years", "hours_per_year"}    # CRF and annual product

    def n(key: str) -> str:
        used.add(key)
        return key

    for line in costs.cost_lines(loop):
        _line_formula(line, "Q", "CRF", n)
    return used


def _value_format(value: float) -> str:
    """Thousands separators; decimals only where the value has them."""
    if float(value).is_integer():
        return FMT_MONEY
    return "#,##0.00##" if abs(value) >= 1 else "0.0000##"


def _assumptions_sheet(wb: Workbook, ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """Every price and economic input a formula uses, in its own named cell.

    Alternatives share one cell per assumption; an alternative whose value
    differs from the one most alternatives use gets its own row and name,
    suffixed ``_A<number>``, and its formulas use that name.  Case values
    that no formula uses are listed after the inputs as plain values.
    """
    _title(ws, 1, "Assumptions: prices and economic inputs (change a yellow cell to re-price "
                  "every alternative)")
    _header(ws, 2, ["Name", "Description", "Value", "Unit", "Value in the case", "Source",
                    "Applies to", "Key in the tool"])
    ws.freeze_panes = "A3"
    ws.print_title_rows = "1:2"
    tables = [(refs.of(a), costs.assumptions(a.loop), _used_keys(a.loop))
              for a in refs.order]
    keys = list(dict.fromkeys(k for _, table, _ in tables for k in table))
    taken: set[str] = set()
    row = 3
    unused = []
    for key in keys:
        users = [(i, table[key]) for i, table, used in tables if key in table and key in used]
        if not users:
            unused.append((key, next(table[key] for _, table, _ in tables if key in table)))
            continue
        refs.used.add(key)
        counts: dict[float, int] = {}
        for _, a in users:
            counts[a.value] = counts.get(a.value, 0) + 1
        shared = max(counts, key=counts.__getitem__)   # the first of the most used values
        base = _defined_name(key, taken)
        sharing = [i for i, a in users if a.value == shared]
        rows = [(base, next(a for _, a in users if a.value == shared), sharing)]
        rows += [(_defined_name(f"{base}_A{i}", taken), a, [i])
                 for i, a in users if a.value != shared]
        for name, a, who in rows:
            for i in who:
                refs.names[(i, key)] = name
            if len(who) == len(tables):
                applies = "all alternatives"
            else:
                applies = ", ".join(f"A{i}" for i in who)
            _text(ws, row, 1, name)
            _text(ws, row, 2, a.label, wrap=True)
            _number(ws, row, 3, a.value, _value_format(a.value)).fill = _INPUT_FILL
            _text(ws, row, 4, a.unit)
            _number(ws, row, 5, a.value, _value_format(a.value))
            _text(ws, row, 6, a.source)
            _text(ws, row, 7, applies, wrap=True)
            _text(ws, row, 8, key)
            wb.defined_names[name] = DefinedName(name, attr_text=_address(ASSUMPTIONS, row, 3))
            row += 1
    refs.inputs = (3, row - 1)
    row += 1
    _text(ws, row, 1, "Each yellow value is a workbook-level defined name (Formulas > Name "
                      "Manager) that the cost build-up formulas use; the column beside it "
                      "keeps the case's value.", wrap=True)
    ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=8)
    row += 2
    if unused:
        _text(ws, row, 1, "Case values no formula here uses (for reference; changing them "
                          "changes nothing)", bold=True)
        row += 1
        for key, a in unused:
            _text(ws, row, 1, key)
            _text(ws, row, 2, a.label, wrap=True)
            _number(ws, row, 5, a.value, _value_format(a.value))
            _text(ws, row, 4, a.unit)
            _text(ws, row, 6, a.source)
            row += 1
    _widths(ws, {"A": 34, "B": 44, "C": 14, "D": 13, "E": 14, "F": 22, "G": 18, "H": 32})


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


def _crf_value(loop, life: float | None = None) -> float:
    """The capital recovery factor at the case values (as :func:`_crf_formula`)."""
    i = loop.prices.discount_rate
    n = life if life is not None else loop.prices.life_years
    return 1.0 / n if i == 0 else i * (1 + i) ** n / ((1 + i) ** n - 1)


#: Columns of a cost block: item, kind, quantity, unit, annual cost, then the same at the
#: present purge fraction, the recipe and the line key.
COST_COLUMNS = ("Item", "Kind", "Quantity at the optimum", "Quantity unit",
                "Annual cost at the optimum", "Quantity at the present purge fraction",
                "Annual cost at the present purge fraction",
                "Recipe (names on the Assumptions sheet)", "Line key")


def _cost_sheet(ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """One block per alternative: quantities as values, annual costs as live formulas."""
    cur = study.currency
    _title(ws, 1, f"Cost build-up at the optimum and at the present purge fraction of each "
                  f"alternative (annual costs in {cur}/year follow the Assumptions sheet)")
    _header(ws, 2, [label + (f" [{cur}/year]" if label.startswith("Annual") else "")
                    for label in COST_COLUMNS])
    ws.freeze_panes = "A3"
    ws.print_title_rows = "1:2"
    _text(ws, 3, 1, _printed_note(study, "blocks"), wrap=True).font = Font(italic=True)
    ws.merge_cells("A3:H3")
    row = 5
    for k, alt in enumerate(refs.by_rank, start=1):
        row = _cost_block(ws, row, alt, refs, cur) + 1
        if k == min(PRINTED_DETAIL, len(refs.by_rank)):
            ws.print_area = f"A1:I{row - 1}"
    _widths(ws, {"A": 40, "B": 11, "C": 15, "D": 11, "E": 17, "F": 15, "G": 17, "H": 62,
                 "I": 26})


#: Alternatives whose cost build-up and stream tables print (the best at the case prices).
PRINTED_DETAIL = 3


def _printed_note(study: StudyResult, what: str) -> str:
    n = min(PRINTED_DETAIL, len(study.alternatives))
    return (f"The {what} follow the ranking at the case prices; the print area holds the "
            f"first {n} (clear it under Page Layout to print every alternative).")


def _cost_block(ws: Worksheet, row: int, alt: Alternative, refs: _Refs, cur: str) -> int:
    """Write one alternative's block from ``row``; returns the first free row."""
    i = refs.of(alt)
    rank = f"rank {alt.rank} at the case prices" if alt.rank is not None else "not ranked"
    _text(ws, row, 1, f"{refs.title(alt)} ({rank})").font = _TITLE
    row += 1
    _text(ws, row, 1, f"Option key: {alt.name}")
    row += 1
    if not _has_state(alt):
        opt = alt.optimum
        _text(ws, row, 1, f"No cost build-up: {opt.status.value}: {opt.message}", wrap=True)
        ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=8)
        return row + 1
    state = alt.optimum.state
    present = alt.present.state if alt.present is not None else None

    def n(key: str) -> str:
        return refs.names[(i, key)]

    _text(ws, row, 1, "Purge fraction of the separator vapour")
    _number(ws, row, 3, state.purge_fraction, FMT_PCT)
    _text(ws, row, 4, "%")
    _number(ws, row, 6, alt.loop.purge_fraction, FMT_PCT)
    _text(ws, row, 8, "optimised, and the case's present value; fixed in this workbook")
    row += 1
    crf_row = row
    _text(ws, row, 1, "Capital recovery factor")
    _formula(ws, row, 3, _crf_formula(n), FMT_CRF, _crf_value(alt.loop))
    _text(ws, row, 4, "1/year")
    _text(ws, row, 8, f"{n('discount_rate')} (1+{n('discount_rate')})^{n('life_years')} / "
                      f"((1+{n('discount_rate')})^{n('life_years')} - 1); "
                      f"1/{n('life_years')} at a zero rate", wrap=True)
    row += 1
    crf = f"$C${crf_row}"
    first = row
    for line in costs.cost_lines(alt.loop):
        formula, reading = _line_formula(line, f"C{row}", crf, n)
        _text(ws, row, 1, line.label, wrap=True)
        _text(ws, row, 2, line.kind)
        _number(ws, row, 3, state.quantities[line.quantity], FMT_QUANTITY)
        _text(ws, row, 4, line.quantity_unit)
        _formula(ws, row, 5, formula, FMT_MONEY, state.costs.get(line.key))
        refs.lines[(i, line.key)] = _address(COSTS, row, 5)
        if present is not None:
            _number(ws, row, 6, present.quantities[line.quantity], FMT_QUANTITY)
            _formula(ws, row, 7, _line_formula(line, f"F{row}", crf, n)[0], FMT_MONEY,
                     present.costs.get(line.key))
        _text(ws, row, 8, reading, wrap=True)
        _text(ws, row, 9, line.key)
        row += 1
    last = row - 1
    tac_row = row
    _text(ws, row, 1, "Total annualised cost (TAC)", bold=True)
    _formula(ws, row, 5, f"SUM(E{first}:E{last})", FMT_MONEY, state.tac_per_year).font = _BOLD
    if present is not None:
        _formula(ws, row, 7, f"SUM(G{first}:G{last})", FMT_MONEY,
                 present.tac_per_year).font = _BOLD
        refs.present_tac[i] = _address(COSTS, tac_row, 7)
    _text(ws, row, 4, f"{cur}/year")
    _text(ws, row, 8, "sum of the lines above")
    refs.tac[i] = _address(COSTS, tac_row, 5)
    row += 1
    _text(ws, row, 1, "Product rate")
    _number(ws, row, 3, state.quantities["product_t_h"], FMT_QUANTITY)
    _text(ws, row, 4, "t/h")
    rate_row = row
    row += 1
    _text(ws, row, 1, "Annual product")
    hours = alt.loop.prices.hours_per_year
    _formula(ws, row, 3, f"C{rate_row}*{n('hours_per_year')}", FMT_MONEY,
             state.quantities["product_t_h"] * hours)
    _text(ws, row, 4, "t/year")
    _text(ws, row, 8, f"product rate x {n('hours_per_year')}")
    refs.tonnes[i] = _address(COSTS, row, 3)
    tonnes_row = row
    row += 1
    _text(ws, row, 1, "Cost per tonne of product", bold=True)
    _formula(ws, row, 5, f"E{tac_row}/C{tonnes_row}", FMT_MONEY_2,
             state.cost_per_tonne_product).font = _BOLD
    _text(ws, row, 4, f"{cur}/t")
    _text(ws, row, 8, "TAC / annual product")
    refs.per_tonne[i] = _address(COSTS, row, 5)
    row += 1
    _text(ws, row, 1, "Memo, not included in TAC: value of reactant lost with the purge "
                      "and the liquid product", wrap=True)
    _number(ws, row, 5, state.lost_reactant_memo_per_year, FMT_MONEY).font = Font(italic=True)
    _text(ws, row, 4, f"{cur}/year")
    _text(ws, row, 8, "already paid for through the make-up gas price; each reactant at its "
                      "own source price, at the case prices", wrap=True)
    row += 1
    _text(ws, row, 1, "At limit (optimum)")
    _text(ws, row, 3, _limit_words(alt, alt.optimum.binding_constraints), wrap=True)
    ws.merge_cells(start_row=row, start_column=3, end_row=row, end_column=8)
    row += 1
    if alt.present is not None and not alt.present.feasible:
        _text(ws, row, 1, "Present purge fraction")
        _text(ws, row, 3, alt.present.message, wrap=True)
        ws.merge_cells(start_row=row, start_column=3, end_row=row, end_column=8)
        row += 1
    _text(ws, row, 1, "Warnings")
    _text(ws, row, 3, "; ".join(state.warnings) or "none", wrap=True)
    ws.merge_cells(start_row=row, start_column=3, end_row=row, end_column=8)
    row = _ratio_rows(ws, row + 1, alt)
    return _inert_limit_rows(ws, row, alt)


def _limit_words(alt: Alternative, names) -> str:
    """Limit names in words ("the inert limit at the reactor inlet"), or "none"."""
    labels = {lim.name: lim.label for lim in limits.loop_limits(alt.loop)}
    return ", ".join(labels.get(name, name) for name in names) or "none"


def _ratio_rows(ws: Worksheet, row: int, alt: Alternative) -> int:
    """A row per reactor-inlet ratio: its value and how it is held; returns the next row."""
    for name, value in alt.optimum.state.inlet_ratio.items():
        _text(ws, row, 1, f"Reactor-inlet ratio {name}")
        _number(ws, row, 3, value, FMT_RATIO)
        _text(ws, row, 4, "-")
        _text(ws, row, 8, limits.ratio_hold(alt.loop, name))
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
        _text(ws, row, 8, "needs a loop gas inventory, an inert limit and inerts in the feed")
        return row + 1
    for key, label in INERT_LIMIT_EVENTS:
        value = hours.get(key)
        if value is None:
            continue
        _text(ws, row, 1, f"Hours to the inert limit, {label}")
        if math.isinf(value):
            _text(ws, row, 3, "never")
            _text(ws, row, 8, "the inert level settles below the limit")
        else:
            _number(ws, row, 3, value, FMT_HOURS)
            _text(ws, row, 8, "from the optimum, production held")
        _text(ws, row, 4, "h")
        row += 1
    return row


# ---------------------------------------------------------------------------
# Ranking


#: Columns of the Ranking sheet's table of alternatives.
RANK_NOW, RANK_COMPUTED, TAC_COLUMN = "C", "D", "E"
RANKING_COLUMNS = (
    ("A", "Code", 7), ("B", "Alternative", 42),
    (RANK_NOW, "Rank at the prices in this workbook", 11),
    (RANK_COMPUTED, "Rank computed at the case prices", 11),
    (TAC_COLUMN, "TAC [{cur}/year]", 15), ("F", "Cost per tonne [{cur}/t]", 11),
    ("G", "Purge fraction [% of separator vapour]", 11),
    ("H", "Inert at reactor inlet (setpoint) [mol %]", 11),
    ("I", "Per-pass conversion of key reactant [%]", 11), ("J", "Overall conversion [%]", 11),
    ("K", "Present purge fraction [%]", 10),
    ("L", "TAC at the present purge fraction [{cur}/year]", 15),
    ("M", "Saving against the present purge fraction [{cur}/year]", 14),
    ("N", "At limit", 40), ("O", "Status", 10), ("P", "Option key", 40))


def _check_texts() -> tuple[str, str]:
    head = ("The optimum purge fractions were computed at the case prices; at the prices now in "
            "this workbook the ranking is ")
    return (head + "the one computed.",
            head + "not the one computed: re-run the study at these prices for new optima.")


def _check_formula(refs: _Refs) -> tuple[str, str]:
    """The validity check: is the live ranking the computed one?  (formula, value now)."""
    same, other = _check_texts()
    formula = (f'IF(SUMPRODUCT(--({refs.column(RANK_NOW)}<>{refs.column(RANK_COMPUTED)}))=0,'
               f'"{same}","{other}")')
    return formula, same


def _check_cell(ws: Worksheet, row: int, refs: _Refs, last_col: int) -> None:
    """The validity check in a merged, wrapped cell, green when it holds and red when not."""
    formula, value = _check_formula(refs)
    cell = _formula(ws, row, 1, formula, "General", value)
    cell.alignment = _WRAP
    cell.font = _BOLD
    ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=last_col)
    ref = f"A{row}"
    ws.conditional_formatting.add(ref, FormulaRule(
        formula=[f'ISNUMBER(SEARCH("is not the one",{ref}))'], fill=_BAD_FILL,
        font=Font(bold=True, color="9C0006")))
    ws.conditional_formatting.add(ref, FormulaRule(
        formula=[f'NOT(ISNUMBER(SEARCH("is not the one",{ref})))'], fill=_GOOD_FILL,
        font=Font(bold=True, color="006100")))


def _ranking_sheet(ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """The live ranking at the workbook's prices, then every alternative in code order.

    The rank of each alternative is a formula over the live TACs (ties in
    code order); the ranked view above looks the alternatives up by that rank,
    so a re-price re-ranks it.  The purge fractions stay as optimised.
    """
    cur = study.currency
    _title(ws, 1, f"Ranking by TAC at the prices now in this workbook ({cur}/year)")
    _check_cell(ws, 2, refs, 10)
    ranked = len(study.ranked)
    head = refs.view_first - 1
    _header(ws, head, ["Rank", "Alternative", "Code", "Rank computed at the case prices",
                       f"TAC [{cur}/year]", f"Cost per tonne [{cur}/t]",
                       f"More than the best [{cur}/year]"])
    by_rank = {a.rank: a for a in study.ranked}
    for k in range(1, ranked + 1):
        r = refs.view_first + k - 1
        alt = by_rank[k]
        s = alt.optimum.state
        _number(ws, r, 1, k, "0")
        _formula(ws, r, 2, refs.pick("B", k), "General", alt.label or alt.name).alignment = _WRAP
        _formula(ws, r, 3, refs.pick("A", k), "General", f"A{refs.of(alt)}")
        _formula(ws, r, 4, refs.pick(RANK_COMPUTED, k), "0", alt.rank)
        _formula(ws, r, 5, refs.pick(TAC_COLUMN, k), FMT_MONEY, s.tac_per_year)
        _formula(ws, r, 6, refs.pick("F", k), FMT_MONEY_2, s.cost_per_tonne_product)
        _formula(ws, r, 7, f"E{r}-$E${refs.view_first}", FMT_MONEY,
                 s.tac_per_year - study.best.optimum.state.tac_per_year)
    if not ranked:
        _text(ws, refs.view_first, 1, "No alternative meets the specification; the reasons "
                                      "are below.")
    _alternatives_table(ws, study, refs)
    ws.freeze_panes = ws.cell(row=refs.view_first, column=1).coordinate
    ws.print_title_rows = "1:1"
    _widths(ws, {letter: width for letter, _, width in RANKING_COLUMNS})


def _alternatives_table(ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    cur = study.currency
    _text(ws, refs.table_head - 1, 1, "Every alternative, in code order", bold=True)
    _header(ws, refs.table_head, [label.format(cur=cur) for _, label, _ in RANKING_COLUMNS])
    first, last = refs.table_first, refs.table_last
    for alt in refs.order:
        row, i = refs.row(alt), refs.of(alt)
        _text(ws, row, 1, f"A{i}")
        _text(ws, row, 2, alt.label or alt.name, wrap=True)
        e = f"{TAC_COLUMN}{row}"
        _formula(ws, row, 3, f'IF(ISNUMBER({e}),RANK({e},${TAC_COLUMN}${first}:'
                             f'${TAC_COLUMN}${last},1)+COUNTIF(${TAC_COLUMN}${first - 1}:'
                             f'{TAC_COLUMN}{row - 1},{e}),"-")', "0",
                 alt.rank if alt.rank is not None else "-")
        if alt.rank is not None:
            _number(ws, row, 4, alt.rank, "0")
        else:
            _text(ws, row, 4, "-")
        opt = alt.optimum
        if _has_state(alt):
            s = opt.state
            _formula(ws, row, 5, refs.tac[i], FMT_MONEY, s.tac_per_year)
            _formula(ws, row, 6, f"{e}/{refs.tonnes[i]}", FMT_MONEY_2, s.cost_per_tonne_product)
            _number(ws, row, 7, s.purge_fraction, FMT_PCT)
            _number(ws, row, 8, s.inert_fraction_reactor_inlet, FMT_PCT_2)
            _number(ws, row, 9, s.first_reaction_conversion, FMT_PCT_2)
            _number(ws, row, 10, s.overall_conversion, FMT_PCT_2)
        _number(ws, row, 11, alt.loop.purge_fraction, FMT_PCT_2)
        present = alt.present
        if _has_state(alt) and present is not None and present.state is not None:
            _formula(ws, row, 12, refs.present_tac[i], FMT_MONEY, present.state.tac_per_year)
            _formula(ws, row, 13, f"L{row}-{e}", FMT_MONEY,
                     present.state.tac_per_year - opt.state.tac_per_year)
        else:
            _text(ws, row, 12, "n/a")
        limits_text = _limit_words(alt, opt.binding_constraints)
        if not opt.feasible:
            limits_text = opt.message
        _text(ws, row, 14, limits_text, wrap=True)
        _text(ws, row, 15, opt.status.value)
        _text(ws, row, 16, alt.name, wrap=True)
    _text(ws, last + 2, 1, "Rank at these prices: by the live TAC (RANK, ties in code order). "
                           "The purge fractions and setpoints stay as optimised at the case "
                           "prices; the check at the top says whether the ranking still holds.",
          wrap=True)
    ws.merge_cells(start_row=last + 2, start_column=1, end_row=last + 2, end_column=12)


# ---------------------------------------------------------------------------
# Summary


def _concat(parts) -> tuple[str, str]:
    """A text formula from parts and its value now: a part is literal text or (expr, value)."""
    formula, value = [], []
    for p in parts:
        if isinstance(p, str):
            formula.append('"' + p.replace('"', '""') + '"')
            value.append(p)
        else:
            formula.append(p[0])
            value.append(p[1])
    return "&".join(formula), "".join(value)


def _headline(study: StudyResult, refs: _Refs, cur_cell: str) -> tuple[str, str]:
    """The recommendation sentence as a formula over the live ranking, and its value now."""
    best = study.best
    s = best.optimum.state
    cur = (cur_cell, study.currency)

    def money(expr: str, value: float):
        return (f'TEXT({expr},"#,##0")', f"{value:,.0f}")

    title = (f'{refs.pick("A", 1)}&" "&{refs.pick("B", 1)}', refs.title(best))
    parts = ["Recommendation: ", title, ", purging ",
             (f'TEXT(100*{refs.pick("G", 1)},"0.000")', f"{100 * s.purge_fraction:.3f}"),
             " % of the separator vapour (inert setpoint ",
             (f'TEXT(100*{refs.pick("H", 1)},"0.00")',
              f"{100 * s.inert_fraction_reactor_inlet:.2f}"),
             " % at the reactor inlet); TAC ", money(refs.pick(TAC_COLUMN, 1), s.tac_per_year),
             " ", cur, "/year"]
    ranked = study.ranked
    if len(ranked) > 1:
        other = ranked[1]
        saving = other.optimum.state.tac_per_year - s.tac_per_year
        parts += [", ", money(f"{refs.pick(TAC_COLUMN, 2)}-{refs.pick(TAC_COLUMN, 1)}", saving),
                  " ", cur, "/year less than the runner-up ",
                  (f'{refs.pick("A", 2)}&" "&{refs.pick("B", 2)}', refs.title(other))]
    if best.present is not None and best.present.state is not None:
        saving = best.present.state.tac_per_year - s.tac_per_year
        m = refs.pick("M", 1)
        parts += [", and ", money(f"ABS({m})", abs(saving)), " ", cur, "/year ",
                  (f'IF({m}>=0,"less","more")', "less" if saving >= 0 else "more"),
                  " than running it at the present purge fraction ",
                  (f'TEXT(100*{refs.pick("K", 1)},"0.00")',
                   f"{100 * best.loop.purge_fraction:.2f}"),
                  " %"]
    return _concat([*parts, "."])


def _summary_sheet(ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """The decision in a live sentence, the key figures, break-even, levers and the cautions."""
    cur = study.currency
    _title(ws, 1, "Purge optimisation study: the decision")
    ws.freeze_panes = "A2"
    ws.print_title_rows = "1:1"
    _text(ws, 2, 1, "Case")
    _text(ws, 2, 2, study.case_name)
    _text(ws, 3, 1, "Currency")
    _text(ws, 3, 2, cur)
    cur_cell = "$B$3"
    best = study.best
    if best is None:
        _text(ws, 5, 1, "No alternative meets the specification; the Ranking sheet gives the "
                        "reason for each.", wrap=True).font = _BOLD
    else:
        formula, value = _headline(study, refs, cur_cell)
        cell = _formula(ws, 5, 1, formula, "General", value)
        cell.alignment, cell.font = _WRAP, Font(bold=True, size=12)
    ws.merge_cells(start_row=5, start_column=1, end_row=5, end_column=6)
    _check_cell(ws, 6, refs, 6)
    first, last = refs.inputs
    changed = (f"SUMPRODUCT(--({quote_sheetname(ASSUMPTIONS)}!$C${first}:$C${last}<>"
               f"{quote_sheetname(ASSUMPTIONS)}!$E${first}:$E${last}))")
    _text(ws, 7, 1, "Inputs on the Assumptions sheet changed from the case", wrap=True)
    _formula(ws, 7, 2, changed, "0", 0)
    _text(ws, 7, 3, "inputs")
    row = 9
    if best is not None:
        row = _key_figures(ws, row, study, refs)
    row = _decision_words(ws, row + 1, study, refs)
    row = _break_even_table(ws, row + 1, study, refs) + 1
    _text(ws, row, 1, "Cautions", bold=True)
    row += 1
    for line in CAUTIONS:
        _text(ws, row, 1, line, wrap=True)
        ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=6)
        row += 1
    _widths(ws, {"A": 44, "B": 40, "C": 22, "D": 40, "E": 16, "F": 16, "G": 14, "H": 14,
                 "I": 12, "J": 16, "K": 30})


def _key_figures(ws: Worksheet, row: int, study: StudyResult, refs: _Refs) -> int:
    cur = study.currency
    best = study.best
    s = best.optimum.state
    _header(ws, row, ["Key figure (at the prices in this workbook)", "Value", "Unit", "Note"])
    row += 1
    pick = refs.pick
    figures = [
        ("Best alternative", f'{pick("A", 1)}&" "&{pick("B", 1)}', "General", refs.title(best),
         "", "lowest TAC at these prices"),
        ("Its purge fraction", pick("G", 1), FMT_PCT, s.purge_fraction,
         "% of separator vapour", "as optimised at the case prices"),
        ("Its inert setpoint", pick("H", 1), FMT_PCT_2, s.inert_fraction_reactor_inlet,
         "mol % at reactor inlet", "the level operations control the purge to"),
        ("TAC of the best alternative", pick(TAC_COLUMN, 1), FMT_MONEY, s.tac_per_year,
         f"{cur}/year", "follows the Assumptions sheet"),
        ("Cost per tonne of product", pick("F", 1), FMT_MONEY_2, s.cost_per_tonne_product,
         f"{cur}/t", "follows the Assumptions sheet"),
    ]
    ranked = study.ranked
    if len(ranked) > 1:
        o = ranked[1].optimum.state
        figures += [
            ("Runner-up", f'{pick("A", 2)}&" "&{pick("B", 2)}', "General", refs.title(ranked[1]),
             "", "second-lowest TAC at these prices"),
            ("TAC of the runner-up", pick(TAC_COLUMN, 2), FMT_MONEY, o.tac_per_year,
             f"{cur}/year", "follows the Assumptions sheet"),
            ("Saving against the runner-up", f"{pick(TAC_COLUMN, 2)}-{pick(TAC_COLUMN, 1)}",
             FMT_MONEY, o.tac_per_year - s.tac_per_year, f"{cur}/year",
             "runner-up TAC minus best TAC"),
        ]
    if best.present is not None and best.present.state is not None:
        p = best.present.state
        figures += [
            ("Best alternative at the present purge fraction", pick("L", 1), FMT_MONEY,
             p.tac_per_year, f"{cur}/year",
             f"at the case's purge_fraction, {100 * best.loop.purge_fraction:.2f} %"
             + ("" if best.present.feasible else "; breaks a limit")),
            ("Saving against the present purge fraction", pick("M", 1), FMT_MONEY,
             p.tac_per_year - s.tac_per_year, f"{cur}/year", "what optimising the purge saves"),
        ]
    for label, formula, fmt, value, unit, note in figures:
        _text(ws, row, 1, label)
        _formula(ws, row, 2, formula, fmt, value).alignment = _WRAP
        _text(ws, row, 3, unit, wrap=True)
        _text(ws, row, 4, note, wrap=True)
        row += 1
    return row


def _decision_words(ws: Worksheet, row: int, study: StudyResult, refs: _Refs) -> int:
    """Break-even and the levers that change the best alternative, in plain words."""
    _text(ws, row, 1, "Purer make-up gas: does it pay? (at the case prices)", bold=True)
    row += 1
    lines = [break_even_words(be, study.currency) for be in study.break_even] or [
        "No break-even: fewer than two single-source make-up grades among the feasible "
        "alternatives."]
    lines.append("Levers that change the best alternative (each moved alone, every alternative "
                 "re-optimised): " + ("; ".join(levers_changing_best(study)) or
                                      "none of the levers tried changes it") + ".")
    for line in lines:
        _text(ws, row, 1, line, wrap=True)
        ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=6)
        row += 1
    return row


def _break_even_table(ws: Worksheet, row: int, study: StudyResult, refs: _Refs) -> int:
    cur = study.currency
    _text(ws, row, 1, "Break-even premium for purer make-up gas", bold=True)
    row += 1
    _text(ws, row, 1, "Price of each purer grade at which its best alternative's TAC equals "
                      "that of the base grade's best alternative, each re-optimised at the "
                      "trial price (values at the case prices); the quoted premium and the "
                      "verdict follow the gas prices on the Assumptions sheet.", wrap=True)
    ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=6)
    row += 1
    if not study.break_even:
        _text(ws, row, 1, "No break-even: fewer than two single-source make-up grades among "
                          "the feasible alternatives.")
        return row + 1
    fields = ["Purer grade", "Base grade", "Alternative (purer grade)", "Base alternative",
              f"Base price [{cur}/kmol]", f"Grade price [{cur}/kmol]",
              f"Tie price [{cur}/kmol]", f"Premium [{cur}/kmol]", "Premium [% of base price]",
              f"TAC at tie [{cur}/year]", f"Quoted premium now [{cur}/kmol]",
              "Pays at the quoted premium", "Note"]
    _header(ws, row, ["Break-even (one column per purer grade)"]
            + [""] * len(study.break_even))
    row += 1
    for k, label in enumerate(fields):
        _text(ws, row + k, 1, label, bold=k == 0)
    for col, entry in enumerate(study.break_even, start=2):
        _break_even_column(ws, row, col, entry, study, refs)
    return row + len(fields)


def _break_even_column(ws: Worksheet, row: int, col: int, entry, study: StudyResult,
                       refs: _Refs) -> None:
    """One break-even record down a column from ``row``, in the order of the field labels."""
    alt, base = study.by_name(entry.alternative), study.by_name(entry.base_alternative)
    letter = get_column_letter(col)
    _text(ws, row, col, entry.grade, bold=True)
    _text(ws, row + 1, col, entry.base_grade)
    _text(ws, row + 2, col, refs.title(alt) if alt else entry.alternative, wrap=True)
    _text(ws, row + 3, col, refs.title(base) if base else entry.base_alternative, wrap=True)
    for k, (value, fmt) in enumerate(((entry.base_price_per_kmol, "0.0000"),
                                      (entry.grade_price_per_kmol, "0.0000"),
                                      (entry.tie_price_per_kmol, "0.0000"),
                                      (entry.premium_per_kmol, "0.0000"),
                                      (entry.premium_percent, "0.00"),
                                      (entry.tac_at_tie_per_year, FMT_MONEY)), start=4):
        _number(ws, row + k, col, value, fmt)
    names = (refs.names.get((refs.of(alt), f"price_per_kmol:{entry.grade}")) if alt else None,
             refs.names.get((refs.of(base), f"price_per_kmol:{entry.base_grade}"))
             if base else None)
    quoted = entry.grade_price_per_kmol - entry.base_price_per_kmol
    if None not in names:
        _formula(ws, row + 10, col, f"{names[0]}-{names[1]}", "0.0000", quoted)
    else:
        _number(ws, row + 10, col, quoted, "0.0000")
    if entry.premium_per_kmol is not None:
        _formula(ws, row + 11, col, f'IF({letter}{row + 10}<{letter}{row + 7},"pays",'
                                    '"does not pay")', "General",
                 "pays" if quoted < entry.premium_per_kmol else "does not pay")
    else:
        _text(ws, row + 11, col, "n/a")
    _text(ws, row + 12, col, entry.note or "", wrap=True)


# ---------------------------------------------------------------------------
# Cost matrix


def _matrix_sheet(ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """Cost lines as rows, alternatives as columns (best first at the case prices), live.

    Below the costs, each line's difference from the same line of the best
    alternative at the prices now in the workbook (looked up by its live rank).
    """
    cur = study.currency
    alts = [a for a in study.ranked if _has_state(a)]
    if not alts:
        _title(ws, 1, "Cost matrix: no alternative has a cost build-up")
        return
    top = max(abs(a.optimum.state.tac_per_year) for a in alts)
    scale, word = (1e6, "million") if top >= 1e7 else (1e3, "thousand")
    unit = f"{word} {cur}/year"
    _title(ws, 1, f"Cost matrix: annual cost lines by alternative [{unit}], following the "
                  "Assumptions sheet")
    labels: dict[str, str] = {}
    for a in alts:
        for line in costs.cost_lines(a.loop):
            labels.setdefault(line.key, line.label)
    keys = list(labels)
    last_col = get_column_letter(1 + len(alts))
    _header(ws, 2, ["Alternative"] + [f"A{refs.of(a)}" for a in alts])
    _text(ws, 3, 1, "In words", bold=True)
    _text(ws, 4, 1, "Rank at the prices in this workbook", bold=True)
    for j, a in enumerate(alts, start=2):
        _text(ws, 3, j, a.label or a.name, wrap=True)
        _formula(ws, 4, j, f"{quote_sheetname(RANKING)}!${RANK_NOW}${refs.row(a)}", "0", a.rank)
    ranks = f"$B$4:${last_col}$4"
    sections = (("cost", 6), ("difference", 6 + len(keys) + 3))
    for kind, start in sections:
        title = (f"Annual cost [{unit}]" if kind == "cost" else
                 f"Difference from the best alternative at these prices [{unit}]")
        _text(ws, start - 1, 1, title, bold=True)
        for k, key in enumerate([*keys, "tac"]):
            r = start + k
            total = key == "tac"
            _text(ws, r, 1, "Total annualised cost (TAC)" if total else labels[key],
                  bold=total, wrap=True)
            for j, a in enumerate(alts, start=2):
                i = refs.of(a)
                state = a.optimum.state
                if total:
                    ref, value = refs.tac[i], state.tac_per_year
                elif (i, key) in refs.lines:
                    ref, value = refs.lines[(i, key)], state.costs[key]
                else:
                    ref, value = None, 0.0
                if kind == "cost":
                    cell = (_formula(ws, r, j, f"{ref}/{scale:g}", FMT_MATRIX, value / scale)
                            if ref else _number(ws, r, j, 0.0, FMT_MATRIX))
                else:
                    here = f"{get_column_letter(j)}{r - start + 6}"
                    best_row = f"$B${r - start + 6}:${last_col}${r - start + 6}"
                    b = study.best.optimum.state
                    base = b.tac_per_year if total else b.costs.get(key, 0.0)
                    cell = _formula(ws, r, j, f"{here}-INDEX({best_row},MATCH(1,{ranks},0))",
                                    FMT_MATRIX, (value - base) / scale)
                if total:
                    cell.font = _BOLD
    ws.freeze_panes = "B5"
    ws.print_title_rows = "1:4"
    _widths(ws, {"A": 40, **{get_column_letter(j): 12 for j in range(2, 2 + len(alts))}})


# ---------------------------------------------------------------------------
# Streams


def _streams_sheet(ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """Per alternative: component flows of every stream at the optimum, then mole fractions."""
    _title(ws, 1, "Stream tables at the optimum purge fraction")
    ws.freeze_panes = "B2"
    ws.print_title_rows = "1:1"
    _text(ws, 2, 1, _printed_note(study, "tables")).font = Font(italic=True)
    row = 3
    widest = 1
    ends = []
    for alt in refs.by_rank:
        ends.append(row - 1)
        _text(ws, row, 1, refs.title(alt)).font = _TITLE
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
        state = alt.optimum.state
        for i, r in enumerate(loop.reactions):  # every reaction's conversion, not the key's only
            _text(ws, row, 1, f"Per-pass conversion of {r.key_reactant}, {r.name} [%]",
                  wrap=True)
            _number(ws, row, 2, state.conversion[i], FMT_PCT_2)
            equilibrium = state.equilibrium_conversion.get(i)
            if equilibrium is not None:
                _text(ws, row, 3, "equilibrium [%]", wrap=True)
                _number(ws, row, 4, equilibrium, FMT_PCT_2)
            row += 1
        _header(ws, row, ["Stream"] + [STREAM_LABELS.get(s, s) for s in streams])
        row += 1
        conditions = stream_conditions(loop)
        for k, label in enumerate(("Pressure [bar abs]", "Temperature [degC]")):
            _text(ws, row, 1, label)
            for j, s in enumerate(streams, start=2):
                _number(ws, row, j, conditions[s][k], "0.0")
            row += 1
        for title, unit, values, fmt in (
                ("Flow", "kmol/h", _flow_table(loop, flows, streams), FMT_FLOW),
                ("Mole fraction", "mol %", _fraction_table(loop, flows, streams), FMT_PCT_2)):
            for label, numbers in values:
                _text(ws, row, 1, f"{title}, {label} [{unit}]", bold=label == "Total")
                for j, v in enumerate(numbers, start=2):
                    _number(ws, row, j, v, fmt)
                row += 1
        row += 1
    ends.append(row - 1)
    ws.print_area = f"A1:{get_column_letter(widest)}{ends[min(PRINTED_DETAIL, len(ends) - 1)]}"
    ws.column_dimensions["A"].width = 30
    for j in range(2, widest + 2):
        ws.column_dimensions[get_column_letter(j)].width = 12


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


def _nice_step(span: float, steps: int = 6) -> float:
    """A round axis step (1, 2, 2.5 or 5 times a power of ten) for about ``steps`` steps."""
    raw = span / steps if span > 0 else 1.0
    power = 10.0 ** math.floor(math.log10(raw))
    return next(m * power for m in (1.0, 2.0, 2.5, 5.0, 10.0) if m * power >= raw)


#: Rows the combined cost-curve chart takes; its table starts below them.
CHART_ROWS = 44
#: Size of the combined cost-curve chart [cm].
CHART_CM = (40.0, 22.0)


def _curves_sheet(ws: Worksheet, study: StudyResult, refs: _Refs) -> None:
    """Every alternative's TAC on one even grid of purge fractions, in one chart.

    Optima are marked, and so is the point where a curve stops because a
    limit (most often the inert limit at the reactor inlet) can no longer be met.
    """
    cur = study.currency
    _title(ws, 1, f"Cost curves: TAC against purge fraction on one grid, at the case prices "
                  f"(values; TAC in million {cur}/year)")
    alts = [a for a in study.ranked if _has_state(a) and a.grid_tac]
    if not alts or not study.grid:
        _text(ws, 3, 1, "No cost curve: no feasible alternative.")
        return
    head = CHART_ROWS + 3
    _text(ws, head - 1, 1, f"TAC [million {cur}/year] on the grid of purge fractions; blank "
                           "where the alternative has no feasible state", bold=True)
    _header(ws, head, ["Purge fraction [%]"] + [refs.title(a) for a in alts])
    first = head + 1
    for k, x in enumerate(study.grid):
        _number(ws, first + k, 1, x, FMT_PCT_2)
        for j, a in enumerate(alts, start=2):
            v = a.grid_tac[k]
            if v is not None:
                _number(ws, first + k, j, v / 1e6, "#,##0.00")
    last = first + len(study.grid) - 1
    marks = last + 3
    _text(ws, marks - 1, 1, "Optima and the points where a curve stops at a limit", bold=True)
    _header(ws, marks, ["Alternative", "Optimum purge fraction [%]",
                        f"TAC at the optimum [million {cur}/year]", "Curve stops at [%]",
                        f"TAC there [million {cur}/year]", "Limit that stops it"])
    ys = [v / 1e6 for a in alts for v in a.grid_tac if v is not None]
    for k, a in enumerate(alts, start=1):
        r = marks + k
        s = a.optimum.state
        _text(ws, r, 1, refs.title(a), wrap=True)
        _number(ws, r, 2, s.purge_fraction, FMT_PCT)
        _number(ws, r, 3, s.tac_per_year / 1e6, "#,##0.00")
        ys.append(s.tac_per_year / 1e6)
        if a.curve_edge is not None:
            x, v, names = a.curve_edge
            _number(ws, r, 4, x, FMT_PCT)
            _number(ws, r, 5, v / 1e6, "#,##0.00")
            _text(ws, r, 6, _limit_words(a, names), wrap=True)
            ys.append(v / 1e6)
    ws.add_chart(_curve_chart(ws, (first, last), (marks + 1, marks + len(alts)), len(alts),
                              study.grid, ys, cur), "A3")
    ws.row_breaks.append(Break(id=CHART_ROWS + 1))
    ws.freeze_panes = "A2"
    _widths(ws, {"A": 30, "B": 13, "C": 13, "D": 13, "E": 13, "F": 30,
                 **{get_column_letter(j): 13 for j in range(7, 2 + len(alts))}})


def _curve_chart(ws, table: tuple[int, int], marks: tuple[int, int], count: int, grid, ys, cur):
    chart = ScatterChart()
    chart.title = "TAC against purge fraction (diamonds: optima; crosses: a limit stops the curve)"
    chart.style = 2
    chart.width, chart.height = CHART_CM
    chart.x_axis.title = "Purge fraction of the separator vapour [%]"
    chart.y_axis.title = f"TAC [million {cur}/year]"
    step_x = _nice_step(max(grid), 7)
    chart.x_axis.scaling.min, chart.x_axis.scaling.max = 0.0, step_x * math.ceil(
        max(grid) / step_x - 1e-9)
    chart.x_axis.majorUnit = step_x
    lo, hi = min(ys), max(ys)
    step_y = _nice_step(hi - lo, 6)
    chart.y_axis.scaling.min = step_y * math.floor(lo / step_y)
    chart.y_axis.scaling.max = step_y * math.ceil(hi / step_y)
    chart.y_axis.majorUnit = step_y
    chart.y_axis.number_format = "#,##0.0"
    chart.x_axis.number_format = "0.0%"
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.legend.position = "b"
    first, last = table
    xs = Reference(ws, min_col=1, min_row=first, max_row=last)
    for j in range(2, 2 + count):
        line = Series(Reference(ws, min_col=j, min_row=first, max_row=last), xs,
                      title_from_data=False)
        line.tx = SeriesLabel(strRef=StrRef(f"'{CURVES}'!${get_column_letter(j)}${first - 1}"))
        line.marker.symbol = "none"
        line.smooth = False
        line.graphicalProperties.line.width = 19050     # 1.5 pt
        chart.series.append(line)
    top, bottom = marks
    for col_x, col_y, symbol, colour, title in ((2, 3, "diamond", "000000", "Optimum"),
                                                (4, 5, "x", "C00000", "Curve stops at a limit")):
        point = Series(Reference(ws, min_col=col_y, min_row=top, max_row=bottom),
                       Reference(ws, min_col=col_x, min_row=top, max_row=bottom), title=title)
        point.marker.symbol = symbol
        point.marker.size = 9
        point.marker.graphicalProperties.solidFill = colour
        point.marker.graphicalProperties.line.solidFill = colour
        point.graphicalProperties.line.noFill = True
        chart.series.append(point)
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
        header += [f"A{numbers[n]} TAC at low [{cur}/year]",
                   f"A{numbers[n]} TAC at base [{cur}/year]",
                   f"A{numbers[n]} TAC at high [{cur}/year]"]
    header += ["Best at low", "Best at high", "Best changes", "Note"]
    _header(ws, row, header)
    ws.print_title_rows = "1:3"
    row += 1
    for r in rows:
        _text(ws, row, 1, r.lever)
        _text(ws, row, 2, r.label, wrap=True)
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
        for k, best in enumerate((r.best_at_low, r.best_at_high)):
            alt = study.by_name(best)
            _text(ws, row, col + k, refs.title(alt) if alt else (best or "n/a"), wrap=True)
        _text(ws, row, col + 2, "yes" if r.best_changes else "no")
        _text(ws, row, col + 3, r.note or "", wrap=True)
        row += 1
    if not rows:
        _text(ws, row, 1, "No sensitivity was run.")
        row += 1
    row += 1
    _text(ws, row, 1, "Alternatives above", bold=True)
    row += 1
    for n in names:
        alt = study.by_name(n)
        _text(ws, row, 1, f"A{numbers[n]}")
        _text(ws, row, 2, alt.label or n if alt else n, wrap=True)
        _text(ws, row, 3, n)
        row += 1
    row = _off_optimum_table(ws, row + 1, study, refs) + 2
    _swings(ws, row, study, refs)
    widths = {"A": 22, "B": 30, "C": 13, "D": 13, "E": 13, "F": 13}
    for j in range(7, 7 + 3 * len(names)):
        widths[get_column_letter(j)] = 13
    for j in range(7 + 3 * len(names), 7 + 3 * len(names) + 2):
        widths[get_column_letter(j)] = 28
    widths[get_column_letter(7 + 3 * len(names) + 2)] = 8
    widths[get_column_letter(7 + 3 * len(names) + 3)] = 40
    _widths(ws, widths)


def _lever_label(r) -> str:
    """A lever with the factors it really applied, "Hours on stream (x0.8 / x1.071)"."""
    return f"{r.label} (x{r.low_factor_applied:.4g} / x{r.high_factor_applied:.4g})"


def _swings(ws: Worksheet, row: int, study: StudyResult, refs: _Refs) -> int:
    """Swings of the best alternative's TAC, largest first, and a tornado chart.

    The chart lists the levers by swing (the largest at the top) with the
    factor each really applied; a capped lever shows its capped factor.
    """
    cur = study.currency
    best = study.best
    data = [r for r in study.sensitivity if best is not None and best.name in r.tac]
    if not data:
        return row

    def swing(r):
        t = r.tac[best.name]
        return max(abs(v - t.base) for v in (t.low, t.high) if v is not None) if \
            any(v is not None for v in (t.low, t.high)) else 0.0

    data.sort(key=swing)       # the bar chart draws its first category at the bottom
    _text(ws, row, 1, f"Swing of the best alternative's TAC ({refs.title(best)}), "
                      "smallest to largest", bold=True)
    row += 1
    head = row
    _header(ws, row, ["Lever (factors applied, low / high)",
                      f"Low - base [million {cur}/year]", f"High - base [million {cur}/year]"])
    row += 1
    for r in data:
        t = r.tac[best.name]
        _text(ws, row, 1, _lever_label(r), wrap=True)
        for col, v in ((2, t.low), (3, t.high)):
            _number(ws, row, col, None if v is None else (v - t.base) / 1e6, "#,##0.00")
        row += 1
    chart = BarChart()
    chart.type = "bar"
    chart.grouping = "clustered"
    chart.overlap = 100
    chart.gapWidth = 60
    chart.title = "Swing of the best alternative's TAC, by lever"
    chart.y_axis.title = f"Change in TAC [million {cur}/year]"
    chart.y_axis.number_format = "#,##0.0"
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.x_axis.tickLblPos = "low"          # lever names at the left, clear of the bars
    chart.height, chart.width = 11, 24
    chart.add_data(Reference(ws, min_col=2, max_col=3, min_row=head, max_row=row - 1),
                   titles_from_data=True)
    chart.set_categories(Reference(ws, min_col=1, min_row=head + 1, max_row=row - 1))
    for series in chart.series:
        series.dLbls = DataLabelList()
        series.dLbls.showVal = True
        series.dLbls.position = "outEnd"
        series.dLbls.numFmt = "#,##0.00"
        for flag in ("showSerName", "showCatName", "showLegendKey", "showPercent"):
            setattr(series.dLbls, flag, False)
    ws.row_breaks.append(Break(id=head - 2))
    ws.add_chart(chart, f"E{head}")
    return max(row, head + 23)


def _off_optimum_table(ws: Worksheet, row: int, study: StudyResult, refs: _Refs) -> int:
    cur = study.currency
    _text(ws, row, 1, "Cost of running off the optimum (values at the case prices)", bold=True)
    row += 1
    _header(ws, row, ["Alternative", "Name", "Optimal purge fraction [%]",
                      f"TAC at optimum [{cur}/year]", f"TAC at half the purge [{cur}/year]",
                      f"Extra at half [{cur}/year]", f"TAC at twice the purge [{cur}/year]",
                      f"Extra at twice [{cur}/year]", "1 % band: lowest purge fraction [%]",
                      "1 % band: highest purge fraction [%]"])
    row += 1
    for alt in refs.order:
        _text(ws, row, 1, f"A{refs.of(alt)}")
        _text(ws, row, 2, alt.label or alt.name, wrap=True)
        if not _has_state(alt):
            _text(ws, row, 3, "n/a")
            row += 1
            continue
        s = alt.optimum.state
        off = alt.optimum.off_optimum
        _number(ws, row, 3, s.purge_fraction, FMT_PCT)
        _number(ws, row, 4, s.tac_per_year, FMT_MONEY)
        sides = (off.tac_half_purge_per_year, off.tac_double_purge_per_year) if off else (None,) * 2
        for col, v in zip((5, 7), sides, strict=True):
            _number(ws, row, col, v, FMT_MONEY)
            extra = v - s.tac_per_year if v is not None and math.isfinite(v) else None
            _number(ws, row, col + 1, extra, FMT_MONEY)
        band = off.band_1pct_purge_fraction if off else (None, None)
        _number(ws, row, 9, band[0], FMT_PCT)
        _number(ws, row, 10, band[1], FMT_PCT)
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
    for alt in refs.order:
        info = alt.optimum.solver
        _text(ws, row, 1, f"A{refs.of(alt)}")
        _text(ws, row, 2, alt.name, wrap=True)
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
        "figures are values at the case prices.",
        "The ranks, the Summary's best alternative, runner-up, savings and recommendation "
        "are formulas over the live TACs, so a re-price re-ranks them; the purge fractions "
        "stay as optimised at the case prices, and the check on the Summary and Ranking "
        "sheets says whether the ranking computed still holds.",
        "Every formula is stored with its result at the case prices, so a reader that does "
        "not calculate (a previewer, pandas) shows the numbers; a spreadsheet recalculates "
        "them on opening.")])
    row = _section(ws, row, "Units", UNITS)
    _section(ws, row, "Cautions", [(line,) for line in CAUTIONS])
    _widths(ws, {"A": 22, "B": 40, "C": 10, "D": 12, "E": 9, "F": 11, "G": 110, "H": 50})
