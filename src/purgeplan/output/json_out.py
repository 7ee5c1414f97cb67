"""JSON results: a stable contract for scripting.

Top level: ``tool_version``, ``case_sha256``, ``alternatives`` (a list; see
:func:`alternative_record`); ranked results add ``ranking`` (names, best
first); a study adds ``case_name``, ``currency``, ``created``, ``break_even``
(the fields of :class:`purgeplan.study.BreakEven`), ``sensitivity`` (the
fields of :class:`purgeplan.study.SensitivityRow`) and
``sensitivity_fraction``.  Flows in kmol/h, money in the case currency per
year.  Non-finite numbers are written as null.  Every alternative carries
``warnings``: one-line strings, empty when none (for instance a bought gas
whose fuel value meets or exceeds its price).
"""

from __future__ import annotations

import dataclasses
import json
import math
from collections.abc import Iterable
from pathlib import Path
from typing import TYPE_CHECKING

from .. import __version__
from ..costs import price_warnings
from ..equations import stream_conditions
from ..loop import Loop
from ..solve import Optimum
from .atomic import write_atomically

if TYPE_CHECKING:
    from ..study import Alternative, StudyResult


def _clean(x):
    if isinstance(x, float):
        return x if math.isfinite(x) else None
    if isinstance(x, dict):
        return {str(k): _clean(v) for k, v in x.items()}
    if isinstance(x, list | tuple):
        return [_clean(v) for v in x]
    return x


def _hours_to_limit(hours: dict) -> dict:
    """Hours to the inert limit; null where it does not apply or is never reached.

    ``never_reached`` names the events after which the inert fraction settles
    below the limit (their hours are null too).
    """
    out = {k: hours.get(k) for k in ("purge_closed", "recovery_down")}
    out["never_reached"] = [k for k, v in out.items() if v is not None and math.isinf(v)]
    return out


def alternative_record(name: str, loop: Loop, opt: Optimum, choices: dict | None = None,
                       rank: int | None = None, code: str = "", label: str = "") -> dict:
    """One alternative's result as plain JSON-ready data.

    ``code`` ("A1", ...) and ``label`` (the alternative in words) come from
    a study; elsewhere they are empty.
    """
    rec = {"name": name, "code": code, "label": label, "choices": dict(choices or {}),
           "rank": rank,
           "feasible": opt.feasible, "status": opt.status.value, "message": opt.message,
           "solver": {"name": opt.solver.name, "status": opt.solver.status,
                      "solves": opt.solver.solves, "seconds": opt.solver.seconds,
                      "method": opt.solver.method, "route": opt.solver.route}}
    s = opt.state
    if s is None:
        rec.update({k: None for k in ("purge_fraction", "inert_fraction_reactor_inlet",
                                      "per_pass_conversion", "overall_conversion",
                                      "tac_per_year", "cost_per_tonne_product")})
        rec.update(costs={}, reactions=[], streams={}, binding_constraints=[], curve=[],
                   warnings=price_warnings(loop), inlet_ratio={},
                   time_to_inert_limit_h=_hours_to_limit({}))
        return _clean(rec)
    rec.update({
        "purge_fraction": s.purge_fraction,
        "inert_fraction_reactor_inlet": s.inert_fraction_reactor_inlet,
        "per_pass_conversion": s.first_reaction_conversion,
        "overall_conversion": s.overall_conversion,
        "tac_per_year": s.tac_per_year,
        "cost_per_tonne_product": s.cost_per_tonne_product,
        "currency": loop.prices.currency,
        "costs": dict(s.costs),
        "lost_reactant_memo_per_year": s.lost_reactant_memo_per_year,
        "warnings": list(s.warnings),
        "reactions": [{"name": r.name, "stoichiometry": dict(r.stoichiometry),
                       "key_reactant": r.key_reactant,
                       "per_pass_conversion": s.conversion[i],
                       "equilibrium_conversion": s.equilibrium_conversion.get(i),
                       "approach_to_equilibrium": s.approach_to_equilibrium.get(i),
                       "extent_kmol_h": s.extents[i],
                       **({"beds": list(s.beds)} if s.beds and i == loop.rate_reaction else {})}
                      for i, r in enumerate(loop.reactions)],
        "streams": s.flows,
        "stream_conditions": {name: {"pressure_bar": pc[0], "temperature_c": pc[1],
                                     "total_kmol_h": sum(s.flows[name].values())}
                              for name, pc in stream_conditions(loop).items()},
        "quantities": dict(s.quantities),
        "inlet_ratio": dict(s.inlet_ratio),
        "time_to_inert_limit_h": _hours_to_limit(opt.time_to_inert_limit_h),
        "balance_error": s.balance_error,
        "binding_constraints": list(opt.binding_constraints),
        "curve": [dataclasses.asdict(point) for point in opt.curve],
        "off_optimum": (dataclasses.asdict(opt.off_optimum)
                        if opt.off_optimum is not None else {}),
    })
    return _clean(rec)


def document(case_sha256: str, records: list[dict], **extra) -> dict:
    """The top-level JSON document."""
    return _clean({"tool_version": __version__, "case_sha256": case_sha256,
                   "alternatives": records, **extra})


def alternatives_document(case_sha256: str, alternatives: Iterable[Alternative], *,
                          ranked: bool = True, **extra) -> dict:
    """The document of a list of alternatives, in the order given.

    With ``ranked`` the names of the ranked alternatives follow as
    ``ranking``, best first (the ranks come from :func:`purgeplan.study.rank`).
    """
    alternatives = list(alternatives)
    records = [alternative_record(a.name, a.loop, a.optimum, a.choices, a.rank, a.code, a.label)
               for a in alternatives]
    if ranked:
        extra = {"ranking": [a.name for a in sorted(
            (a for a in alternatives if a.rank is not None), key=lambda a: a.rank)], **extra}
    return document(case_sha256, records, **extra)


def decision_block(result: StudyResult) -> dict:
    """The decision in words and each alternative's present operation and grid of TACs.

    ``recommendation``, ``break_even_words`` and ``levers_changing_best`` are
    the sentences the terminal prints; ``grid`` is the study's even grid of
    purge fractions; ``present`` (by alternative name) the case's present
    purge fraction, the TAC there (null without a steady state) and whether
    it meets every limit; ``grid_tac`` (by name) the TAC on the grid, null
    where infeasible.
    """
    from ..study import break_even_words, levers_changing_best, recommendation

    present = {}
    for a in result.alternatives:
        p = a.present
        present[a.name] = {"purge_fraction": a.loop.purge_fraction,
                           "tac_per_year": p.state.tac_per_year if p and p.state else None,
                           "feasible": bool(p is not None and p.feasible)}
    return _clean({
        "recommendation": recommendation(result),
        "break_even_words": [break_even_words(b, result.currency) for b in result.break_even],
        "levers_changing_best": levers_changing_best(result),
        "grid": list(result.grid),
        "present": present,
        "grid_tac": {a.name: list(a.grid_tac) for a in result.alternatives}})


def study_document(result: StudyResult) -> dict:
    """The study: its alternatives, ranking, break-even premiums, sensitivity and scenarios."""
    from .uncertainty_out import uncertainty_block

    doc = alternatives_document(
        result.case_sha256, result.alternatives, case_name=result.case_name,
        currency=result.currency, created=result.created,
        break_even=[dataclasses.asdict(b) for b in result.break_even],
        sensitivity=[dataclasses.asdict(r) for r in result.sensitivity],
        sensitivity_fraction=result.sensitivity_fraction, decision=decision_block(result))
    doc["uncertainty"] = (None if result.uncertainty is None
                          else uncertainty_block(result.uncertainty))
    return doc


def write_json(path: str | Path, doc: dict) -> Path:
    """Write a JSON document atomically."""
    text = json.dumps(doc, indent=2, sort_keys=False, allow_nan=False)
    return write_atomically(path, lambda tmp: Path(tmp).write_text(text + "\n",
                                                                   encoding="utf-8"))
