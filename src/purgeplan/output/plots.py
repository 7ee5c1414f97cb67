"""PNG plots: cost curves of all alternatives and the sensitivity swings."""

from __future__ import annotations

import math
from pathlib import Path
from typing import TYPE_CHECKING

from .atomic import write_atomically

if TYPE_CHECKING:
    from ..study import StudyResult


def _pyplot():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def plot_cost_curves(path: str | Path, study: StudyResult) -> Path:
    """TAC against purge fraction for every feasible alternative, optima marked."""
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(8, 6.5), dpi=120)
    for alt in study.ranked:
        curve = alt.optimum.curve
        if not curve:
            continue
        x = [p.purge_fraction for p in curve]
        y = [p.tac_per_year / 1e6 for p in curve]
        (line,) = ax.plot(x, y, label=f"{alt.rank}. {alt.title}")
        s = alt.optimum.state
        ax.plot([s.purge_fraction], [s.tac_per_year / 1e6], "o", color=line.get_color())
        if alt.curve_edge is not None and alt.curve_edge[0] <= x[0] * (1 + 1e-9):
            edge_x, edge_tac, _names = alt.curve_edge      # where a limit stops the curve
            ax.plot([edge_x], [edge_tac / 1e6], "x", color=line.get_color(), ms=8, mew=2)
    ax.set_xscale("log")
    ax.set_xlabel("Purge fraction of separator vapour [-]")
    ax.set_ylabel(f"Total annualised cost [million {study.currency}/year]")
    ax.set_title("Cost curves (dots: optimum of each alternative; crosses: a limit stops "
                 "the curve)", fontsize=10)
    ax.grid(True, which="both", alpha=0.3)
    if ax.lines:
        ax.legend(fontsize=7, loc="upper center", bbox_to_anchor=(0.5, -0.13), ncol=2,
                  frameon=False)
    else:
        ax.text(0.5, 0.5, "no feasible alternative", transform=ax.transAxes, ha="center")
    fig.tight_layout()
    out = write_atomically(Path(path),
                           lambda tmp: fig.savefig(tmp, format="png", bbox_inches="tight"))
    plt.close(fig)
    return out


def plot_sensitivity(path: str | Path, study: StudyResult) -> Path:
    """Tornado of TAC swings of the best alternative for each lever."""
    plt = _pyplot()
    best = study.best
    rows = []
    for row in study.sensitivity:
        if best is None or best.name not in row.tac:
            continue
        t = row.tac[best.name]
        low = (t.low - t.base) / 1e6 if t.low is not None else math.nan
        high = (t.high - t.base) / 1e6 if t.high is not None else math.nan
        cut = [f"{side} x{applied:.4g}" for side, asked, applied in (
            ("low", row.low_factor, row.low_factor_applied),
            ("high", row.high_factor, row.high_factor_applied)) if applied != asked]
        rows.append((row.label + (f" ({', '.join(cut)} applied)" if cut else ""), low, high))
    rows.sort(key=lambda r: max(abs(v) for v in r[1:] if not math.isnan(v)) if not all(
        math.isnan(v) for v in r[1:]) else 0)
    fig, ax = plt.subplots(figsize=(8, 5), dpi=120)
    y = range(len(rows))
    ax.barh(y, [r[1] for r in rows], color="#4477aa",
            label=f"-{100 * study.sensitivity_fraction:.0f} %")
    ax.barh(y, [r[2] for r in rows], color="#cc6677",
            label=f"+{100 * study.sensitivity_fraction:.0f} %")
    ax.set_yticks(list(y), [r[0] for r in rows], fontsize=8)
    ax.axvline(0, color="black", lw=0.8)
    ax.set_xlabel(f"Change in TAC of the best alternative [million {study.currency}/year]")
    ax.set_title(f"Sensitivity: {best.title if best else ''}", fontsize=9)
    ax.legend(fontsize=8)
    fig.tight_layout()
    out = write_atomically(Path(path),
                           lambda tmp: fig.savefig(tmp, format="png", bbox_inches="tight"))
    plt.close(fig)
    return out
