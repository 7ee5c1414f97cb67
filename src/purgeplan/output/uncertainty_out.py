"""The price-scenario results as JSON, terminal lines, a PNG plot and a workbook sheet."""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from ..uncertainty import UncertaintyResult

#: Name of the workbook sheet.
SHEET = "Price scenarios"


def _number(x):
    return None if x is None or (isinstance(x, float) and not math.isfinite(x)) else x


def uncertainty_block(result: UncertaintyResult) -> dict:
    """The ``uncertainty`` block of the JSON document."""
    return {
        "scenarios": result.scenarios,
        "scenarios_finished": result.finished,
        "interrupted": result.interrupted,
        "seed": result.seed,
        "inputs": result.inputs,
        "recommended": result.recommended,
        "alternatives": {a.name: {
            "route": a.route,
            "probability_best": a.probability_best,
            "tac_percentiles": {k: _number(v) for k, v in a.tac_percentiles.items()},
            "purge_fraction_percentiles": {k: _number(v)
                                           for k, v in a.purge_fraction_percentiles.items()},
            "inert_fraction_percentiles": {k: _number(v)
                                           for k, v in a.inert_fraction_percentiles.items()},
            "expected_regret": _number(a.expected_regret),
            "mean_tac": _number(a.mean_tac),
            "feasible_share": a.feasible_share,
        } for a in result.alternatives},
        "drivers": [{"input": d.input, "rank_correlation": d.rank_correlation}
                    for d in result.drivers],
        "sobol": None if result.sobol is None else {
            "inputs": result.sobol.names, "first_order": result.sobol.first,
            "total": result.sobol.total, "first_order_confidence": result.sobol.first_confidence,
            "total_confidence": result.sobol.total_confidence,
            "evaluations": result.sobol.evaluations,
            "note": "Saltelli's plan with the inputs taken as independent"},
        "seconds": result.seconds,
    }


def _millions(x: float | None) -> str:
    return "-" if x is None or not math.isfinite(x) else f"{x / 1e6:,.2f}"


def terminal_lines(result: UncertaintyResult, currency: str,
                   labels: Mapping[str, str] | None = None) -> tuple[list[str], list[str]]:
    """The scenario results: table lines (most often best first) and sentences to wrap."""
    labels = labels or {}
    n = result.finished
    lines = [f"price scenarios: {n} of {result.scenarios} (seed {result.seed}), every "
             "alternative re-optimized in each" + (" - interrupted" if result.interrupted
                                                   else "")]
    head = (f"{'best in':>8}  {'TAC P10':>9} {'P50':>9} {'P90':>9}  {'regret':>8}  "
            f"{'purge P50':>9}  alternative")
    lines += [f"{'':8}  {'M ' + currency + '/year':>29}  {'M/year':>8}", head]
    for a in sorted(result.alternatives, key=lambda a: (-a.probability_best, a.mean_tac)):
        t, pf = a.tac_percentiles, a.purge_fraction_percentiles.get("P50")
        lines.append(f"{100 * a.probability_best:7.1f}%  {_millions(t['P10']):>9} "
                     f"{_millions(t['P50']):>9} {_millions(t['P90']):>9}  "
                     f"{_millions(a.expected_regret):>8}  "
                     f"{'-' if pf is None else f'{pf:.5f}':>9}  {labels.get(a.name, a.name)}")
    notes = []
    rec = next((a for a in result.alternatives if a.name == result.recommended), None)
    if rec is not None:
        notes.append(
            f"{labels.get(rec.name, rec.name)} is the best in {100 * rec.probability_best:.1f} %"
            f" of the scenarios; choosing it costs {rec.expected_regret:,.0f} {currency}/year "
            "more on average than the best choice in each scenario would")
    if result.drivers:
        strongest = ", ".join(f"{d.input} ({d.rank_correlation:+.2f})"
                              for d in result.drivers[:3])
        notes.append("what drives the choice (rank correlation with the recommended "
                     f"alternative's TAC less the best other's): {strongest}")
    if result.sobol is not None:
        s = result.sobol
        order = np.argsort(s.total)[::-1]
        notes.append("Sobol total indices of that gap (inputs taken as independent): "
                     + ", ".join(f"{s.names[i]} {s.total[i]:.2f}" for i in order))
    return lines, notes


def plot_uncertainty(path, result: UncertaintyResult, currency: str,
                     labels: Mapping[str, str] | None = None) -> None:
    """TAC distribution per alternative (box plot) and the probability of being best."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    labels = labels or {}
    order = sorted(range(len(result.alternatives)),
                   key=lambda i: result.alternatives[i].mean_tac)
    names = [labels.get(result.alternatives[i].name, result.alternatives[i].name)
             for i in order]
    fig, (left, right) = plt.subplots(1, 2, figsize=(12, 0.45 * len(order) + 2.0),
                                      sharey=True, gridspec_kw={"width_ratios": [3, 1]})
    data = [result.tac[i][np.isfinite(result.tac[i])] / 1e6 for i in order]
    left.boxplot(data, vert=False, whis=(10, 90), showfliers=False)
    left.set_yticks(range(1, len(order) + 1), names, fontsize=8)
    left.invert_yaxis()
    left.set_xlabel(f"TAC over the scenarios [M {currency}/year] (box: quartiles; "
                    "whiskers: P10 and P90)")
    left.grid(axis="x", alpha=0.3)
    p = [100 * result.alternatives[i].probability_best for i in order]
    right.barh(range(1, len(order) + 1), p, color="#4c72b0")
    for y, v in enumerate(p, start=1):
        right.text(v + 1, y, f"{v:.0f} %", va="center", fontsize=8)
    right.set_xlim(0, 115)
    right.set_xlabel("scenarios where it is best [%]")
    fig.suptitle(f"{result.finished} price scenarios, every alternative re-optimized in each")
    fig.tight_layout()
    fig.savefig(path, dpi=120)
    plt.close(fig)


def add_uncertainty_sheet(wb, result: UncertaintyResult, currency: str,
                          labels: Mapping[str, str] | None = None) -> None:
    """A sheet with the per-alternative table and native charts of it."""
    from openpyxl.chart import BarChart, Reference
    from openpyxl.styles import Alignment, Font

    labels = labels or {}
    ws = wb.create_sheet(SHEET)
    ws["A1"] = f"Price scenarios: {result.finished} of {result.scenarios}, seed {result.seed}"
    ws["A1"].font = Font(bold=True, size=12)
    ws["A2"] = ("Every alternative's purge fraction optimized again at each scenario's "
                "prices (computed values; they do not follow edits of the Assumptions sheet).")
    head = ["Alternative", "Route", "Best in [%]", f"TAC P10 [{currency}/year]",
            f"TAC P50 [{currency}/year]", f"TAC P90 [{currency}/year]",
            f"Expected regret [{currency}/year]", "Purge fraction P10 [-]",
            "Purge fraction P50 [-]", "Purge fraction P90 [-]", "Inert at inlet P50 [%]",
            "Feasible in [%]"]
    for j, h in enumerate(head, start=1):
        c = ws.cell(row=4, column=j, value=h)
        c.font = Font(bold=True)
        c.alignment = Alignment(wrap_text=True, vertical="top")
    ws.row_dimensions[4].height = 45
    ws.freeze_panes = "B5"
    rows = sorted(result.alternatives, key=lambda a: a.mean_tac)
    for i, a in enumerate(rows, start=5):
        t, pf, inert = a.tac_percentiles, a.purge_fraction_percentiles, \
            a.inert_fraction_percentiles
        values = [labels.get(a.name, a.name), a.route, a.probability_best, t["P10"], t["P50"],
                  t["P90"], _number(a.expected_regret), pf["P10"], pf["P50"], pf["P90"],
                  inert["P50"], a.feasible_share]
        for j, v in enumerate(values, start=1):
            ws.cell(row=i, column=j, value=v)
        ws.cell(row=i, column=3).number_format = "0.0%"
        ws.cell(row=i, column=11).number_format = "0.0%"
        ws.cell(row=i, column=12).number_format = "0%"
        for j in range(4, 8):
            ws.cell(row=i, column=j).number_format = "#,##0"
        for j in range(8, 11):
            ws.cell(row=i, column=j).number_format = "0.00000"
    ws.column_dimensions["A"].width = 48
    ws.column_dimensions["B"].width = 24
    for col in "CDEFGHIJKL":
        ws.column_dimensions[col].width = 14
    last = 4 + len(rows)
    drivers_row = last + 2
    ws.cell(row=drivers_row, column=1, value="What drives the choice: rank correlation of "
            "each input with the recommended alternative's TAC less the best other's").font = \
        Font(bold=True)
    for k, d in enumerate(result.drivers, start=drivers_row + 1):
        ws.cell(row=k, column=1, value=d.input)
        ws.cell(row=k, column=3, value=d.rank_correlation).number_format = "+0.00;-0.00"
    best = BarChart()
    best.type = "bar"
    best.title = "Scenarios where each alternative is best"
    best.y_axis.title = "share of scenarios"
    best.y_axis.numFmt = "0%"
    best.add_data(Reference(ws, min_col=3, min_row=4, max_row=last), titles_from_data=True)
    best.set_categories(Reference(ws, min_col=1, min_row=5, max_row=last))
    best.legend = None
    best.height, best.width = 9, 18
    spread = BarChart()
    spread.type = "bar"
    spread.grouping = "clustered"
    spread.title = f"TAC over the scenarios: P10, P50, P90 [{currency}/year]"
    spread.add_data(Reference(ws, min_col=4, max_col=6, min_row=4, max_row=last),
                    titles_from_data=True)
    spread.set_categories(Reference(ws, min_col=1, min_row=5, max_row=last))
    spread.height, spread.width = 9, 18
    anchor = drivers_row + len(result.drivers) + 2
    ws.add_chart(best, f"A{anchor}")
    ws.add_chart(spread, f"F{anchor}")
