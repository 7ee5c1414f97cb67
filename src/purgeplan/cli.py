"""Command line: a thin shell over the library.

The exit statuses are :data:`EXIT_STATUSES`; ``--help`` prints them and the
README lists them.  Every output path is checked before any work is done.
Each command imports only the parts of the library it needs, so that the
command line starts quickly.
"""

from __future__ import annotations

import argparse
import re
import sys
import textwrap
from dataclasses import dataclass, field
from pathlib import Path

from . import __version__
from .cautions import CAUTION
from .errors import CaseError

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT, EXIT_INFEASIBLE, EXIT_FAILED, EXIT_WRITE = range(6)
EXIT_INTERRUPTED = 130

#: Every exit status and its meaning, as ``--help`` and the README give them.
EXIT_STATUSES = (
    (EXIT_OK, "done"),
    (EXIT_INTERNAL, "internal error; please report it with the case file"),
    (EXIT_BAD_INPUT, "bad input: a case key, an option or an output path; one line names it "
                     "and the fix, and nothing is written"),
    (EXIT_INFEASIBLE, "a valid case in which some alternative is infeasible or has no steady "
                      "state; the reason is given and the other alternatives are still "
                      "reported"),
    (EXIT_FAILED, "a solver failure or time limit in some alternative"),
    (EXIT_WRITE, "an output could not be written after the work was done; the message names "
                 "it and the outputs that were written"),
    (EXIT_INTERRUPTED, "interrupted (Ctrl-C or SIGTERM)"),
)

DEMO_CASE = "ammonia_demo.toml"
DEMO_SUFFIX = "_demo.toml"
DEFAULT_WORKBOOK = "purgeplan_study.xlsx"
STDOUT = "-"


def _data_folder(kind: str) -> Path:
    """The folder of files shipped with the package (demo cases, templates)."""
    from importlib.resources import files

    shipped = Path(str(files("purgeplan"))) / kind
    if shipped.is_dir():
        return shipped
    return Path(__file__).resolve().parents[2] / kind


def data_file(kind: str, name: str) -> Path:
    """A file shipped with the package (demo cases, templates)."""
    return _data_folder(kind) / name


def demo_cases() -> dict[str, Path]:
    """The bundled demo cases by short name ("ammonia" for ``ammonia_demo.toml``)."""
    folder = _data_folder("cases")
    return {p.name[:-len(DEMO_SUFFIX)]: p for p in sorted(folder.glob(f"*{DEMO_SUFFIX}"))}


# ---------------------------------------------------------------------------
# the parser


def _exit_text() -> str:
    lines = ["exit status:"]
    for code, meaning in EXIT_STATUSES:
        lines += textwrap.wrap(meaning, 74, initial_indent=f"  {code:<5}",
                               subsequent_indent=" " * 7)
    return "\n".join(lines)


def _epilog() -> str:
    return "\n".join(textwrap.wrap(CAUTION, 79)) + "\n\n" + _exit_text()


class _Formatter(argparse.RawDescriptionHelpFormatter):
    """Help as written: the cautions and the exit statuses keep their lines."""


def _add_case(p: argparse.ArgumentParser, *, optional: bool = False) -> None:
    if optional:
        p.add_argument("case", nargs="?", metavar="CASE",
                       help="case file (TOML); default: the bundled ammonia demo")
    else:
        p.add_argument("case", metavar="CASE", help="case file (TOML)")


def _add_alternative(p: argparse.ArgumentParser, what: str) -> None:
    p.add_argument("--alternative", metavar="ALT",
                   help=f"{what}: its number or label as `check` lists them, or its name "
                        "(spaces and the order of the options do not matter)")


def _add_json(p: argparse.ArgumentParser) -> None:
    p.add_argument("--json", metavar="FILE.json",
                   help="also write the results as JSON to this file; '-' writes them to "
                        "standard output and the report to standard error")


def _add_plots(p: argparse.ArgumentParser, what: str) -> None:
    p.add_argument("--plots", metavar="DIR",
                   help=f"folder for the PNG plots ({what}); it is created if missing, "
                        "inside a folder that exists")


def _add_run_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--time-limit", type=float, metavar="S",
                   help="wall-clock limit per alternative [s]")
    _add_quiet(p)


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="purgeplan", formatter_class=_Formatter,
        description=textwrap.fill(
            "Lowest-cost purge fraction and inert setpoint for gas recycle loops (ammonia, "
            "methanol, hydrogenation), ranked design alternatives and a workbook economists "
            "can re-price.", 79),
        epilog=_epilog())
    p.add_argument("--version", action="version", version=f"purgeplan {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")

    sub.add_parser("demos", help="list the bundled demo cases (invented data)",
                   description="List the bundled demo cases; every number in them is "
                               "invented.  Copy one to edit with `purgeplan new CASE.toml "
                               "--from DEMO`.")

    n = sub.add_parser("new", help="write a commented case template, or a copy of a demo case",
                       description="Write a fully commented case template, or with --from a "
                                   "copy of a bundled demo case, to edit.")
    n.add_argument("path", metavar="CASE.toml",
                   help="the case file to write (its folder must exist; never overwritten)")
    n.add_argument("--from", dest="demo", metavar="DEMO",
                   help="copy this demo case instead of the template (see `purgeplan demos`)")

    c = sub.add_parser("check", help="validate a case file and report each alternative at the "
                                     "case's present purge fraction",
                       description="Validate a case file, list its alternatives with the "
                                   "numbers and labels --alternative takes, and report each "
                                   "one's steady state and limits at the case's present purge "
                                   "fraction.")
    _add_case(c)

    e = sub.add_parser("evaluate", help="steady state, costs and limits at one purge fraction",
                       description="Steady state, cost lines and limits of one alternative at "
                                   "a given purge fraction (what the present operation "
                                   "costs).")
    _add_case(e)
    _add_alternative(e, "the alternative to evaluate (needed when the case has several)")
    e.add_argument("--purge-fraction", type=float, metavar="A",
                   help="fraction of the separator vapour purged [-]; default: the case's "
                        "present value, loop.purge_fraction")
    _add_json(e)

    o = sub.add_parser("optimize", help="lowest-cost purge fraction of each alternative",
                       description="The lowest-cost purge fraction of each alternative and "
                                   "the inert setpoint it gives, ranked.")
    _add_case(o)
    _add_alternative(o, "only this alternative")
    _add_json(o)
    _add_plots(o, "cost curves")
    from .cli_scenarios import add_jobs

    add_jobs(o)
    _add_run_options(o)

    s = sub.add_parser("study", help="optimum of each alternative, ranking, break-even premium, "
                                     "sensitivity and workbook",
                       description="Everything: the optimum of each alternative, the ranking, "
                                   "the break-even premium of purer make-up gas, the "
                                   "sensitivity to prices, the price scenarios of an "
                                   "[uncertainty] table, the recommendation, and the workbook.")
    _add_case(s, optional=True)
    s.add_argument("-o", "--output", default=DEFAULT_WORKBOOK, metavar="OUT.xlsx",
                   help=f"workbook to write [default: {DEFAULT_WORKBOOK}]")
    _add_json(s)
    _add_plots(s, "cost curves, sensitivity and price scenarios")
    from .cli_scenarios import add_jobs
    from .cli_scenarios import add_parser as add_scenarios

    add_jobs(s)
    _add_run_options(s)

    add_scenarios(sub, _add_case, _add_json, _add_plots, _add_quiet)
    return p


def _add_quiet(p: argparse.ArgumentParser) -> None:
    p.add_argument("--quiet", action="store_true",
                   help="no progress bar (it is shown only on a terminal anyway)")


# ---------------------------------------------------------------------------
# errors the command line adds to those of the library


class _ChoiceError(CaseError):
    """A choice that names no alternative: the alternatives are listed, one per line."""

    def __init__(self, path: str, message: str, listing: list[str]):
        super().__init__(path, message)
        self.listing = listing


class _WriteFailure(Exception):
    """An output that could not be written once the work was done."""

    def __init__(self, given: str, reason: str, written: list[str]):
        done = f"; written: {', '.join(written)}" if written else "; no output was written"
        super().__init__(f"cannot write {given}: {reason}{done}")


def _fail(message: str, status: int) -> int:
    one_line = " ".join(str(message).split())
    print(f"purgeplan: error: {one_line}", file=sys.stderr)
    return status


# ---------------------------------------------------------------------------
# output paths: checked before the work, written after it


@dataclass
class _Target:
    """One output as the user named it; ``path`` None is standard output."""

    option: str
    given: str
    path: Path | None


def _file_target(option: str, value: str | None, suffix: str, what: str,
                 stdout: bool = False) -> _Target | None:
    from .output.atomic import file_problem

    if value is None:
        return None
    if stdout and value == STDOUT:
        return _Target(option, value, None)
    where = f"{option} {value}" if option.startswith("-") else value
    problem = file_problem(value)
    if problem:
        raise CaseError(where, problem)
    if Path(value).suffix.lower() != suffix:
        alt = f", or {STDOUT} for standard output" if stdout else ""
        raise CaseError(where, f"{what}; give a file name ending in {suffix}{alt}")
    return _Target(option, value, Path(value))


def _folder_target(option: str, value: str | None) -> _Target | None:
    from .output.atomic import folder_problem

    if value is None:
        return None
    problem = folder_problem(value)
    if problem:
        raise CaseError(f"{option} {value}", problem)
    return _Target(option, value, Path(value))


def _json_target(args) -> _Target | None:
    return _file_target("--json", args.json, ".json", "the results are written as JSON",
                        stdout=True)


@dataclass
class _Writer:
    """Writes outputs and remembers them, so that a failure can say what was written."""

    written: list[str] = field(default_factory=list)

    def file(self, target: _Target, write) -> None:
        try:
            write(target.path)
        except OSError as exc:
            raise _WriteFailure(target.given, exc.strerror or str(exc), self.written) from exc
        self.written.append(target.given)

    def json(self, target: _Target, doc: dict) -> None:
        if target.path is None:
            import json

            sys.stdout.write(json.dumps(doc, indent=2, allow_nan=False) + "\n")
            sys.stdout.flush()
            return
        from .output.json_out import write_json

        self.file(target, lambda path: write_json(path, doc))

    def plots(self, target: _Target, names_and_writers) -> None:
        from .output.atomic import make_folder

        try:
            make_folder(target.path)
        except OSError as exc:
            raise _WriteFailure(target.given, exc.strerror or str(exc), self.written) from exc
        for name, write in names_and_writers:
            self.file(_Target(target.option, str(Path(target.given) / name),
                              target.path / name), write)


def _report_stream(json_target: _Target | None):
    """Standard output, unless the JSON goes there; then the report goes to standard error."""
    return sys.stderr if json_target is not None and json_target.path is None else sys.stdout


# ---------------------------------------------------------------------------
# naming alternatives


@dataclass(frozen=True)
class _Choice:
    """One alternative as the user can name it: its number, short label and name."""

    number: int
    label: str
    name: str
    choices: dict


def _short_label(name: str, choices: dict) -> str:
    from .case import alternative_name

    if choices and name == alternative_name(choices):
        return ", ".join(choices[o] for o in sorted(choices))
    return name


def _choices(named) -> list[_Choice]:
    """Number, label and name of each alternative, in the order given (sorted by name).

    ``named`` holds (name, choices) pairs.  A label that two alternatives
    would share is replaced by the full name.
    """
    labels = [_short_label(name, choices) for name, choices in named]
    shared = {lab for lab in labels if labels.count(lab) > 1}
    return [_Choice(i, name if lab in shared else lab, name, dict(choices))
            for i, ((name, choices), lab) in enumerate(zip(named, labels, strict=True), 1)]


def _norm(text: str) -> str:
    return re.sub(r"\s*([,=])\s*", r"\1", " ".join(text.split())).casefold()


def _listing(choices: list[_Choice]) -> list[str]:
    """The alternatives one per line: number, label and (where it differs and fits) name."""
    width = max(len(c.label) for c in choices)
    digits = len(str(len(choices)))
    full = [f"  {c.number:>{digits}}  {c.label:<{width}}  {c.name}" if c.name != c.label
            else f"  {c.number:>{digits}}  {c.label}" for c in choices]
    if max(map(len, full)) <= _width():
        return full
    return [f"  {c.number:>{digits}}  {c.label}" for c in choices]


def _match(choices: list[_Choice], text: str) -> list[_Choice]:
    """The alternatives ``text`` names: by number, label, name or option=choice pairs."""
    wanted = text.strip()
    if re.fullmatch(r"[Aa][0-9]+", wanted):     # the code a study gives, A1, A2, ...
        wanted = wanted[1:]
    if wanted.isdigit():
        return [c for c in choices if c.number == int(wanted)]
    key = _norm(wanted)
    hits = [c for c in choices if key in (_norm(c.label), _norm(c.name))]
    if hits:
        return hits
    parts = [p.split("=", 1) for p in key.split(",") if p]
    if not parts or any(len(p) != 2 for p in parts):
        return []
    asked = dict(parts)

    def has(c: _Choice) -> bool:
        mine = {_norm(k): _norm(v) for k, v in c.choices.items()}
        return all(mine.get(o) == v for o, v in asked.items())

    return [c for c in choices if has(c)]


def _pick(choices: list[_Choice], text: str) -> _Choice:
    """The one alternative ``text`` names, else a _ChoiceError that lists them all."""
    import difflib

    hits = _match(choices, text)
    if len(hits) == 1:
        return hits[0]
    listing = _listing(choices)
    where = f"--alternative {text}"
    if text.strip().isdigit():
        raise _ChoiceError(where, f"there is no alternative number {text.strip()}; give a "
                                  f"number from 1 to {len(choices)}", listing)
    if hits:
        raise _ChoiceError(where, f"names {len(hits)} alternatives; give a number or name "
                                  "more options (the alternatives are listed above)", listing)
    names = {_norm(c.label): c.label for c in choices} | {_norm(c.name): c.name for c in choices}
    hint = difflib.get_close_matches(_norm(text), list(names), n=1, cutoff=0.3)
    fix = f"did you mean '{names[hint[0]]}'? " if hint else ""
    raise _ChoiceError(where, f"no such alternative; {fix}give a number, a label or a name "
                              "from the list above", listing)


# ---------------------------------------------------------------------------
# terminal output


def _width() -> int:
    import shutil

    return max(40, shutil.get_terminal_size((80, 24)).columns)


def _limit_labels(loop) -> dict[str, str]:
    from .limits import loop_limits

    return {lim.name: lim.label for lim in loop_limits(loop)}


def _short(label: str) -> str:
    return label[4:] if label.startswith("the ") else label


@dataclass
class _Column:
    """One column of the result table: two header lines and a cell per row.

    ``wrap`` is the narrowest a text column may wrap to (0: never wraps);
    ``below`` labels the cell when the column moves to a line under its row
    to make the table fit (empty: the column always stays).
    """

    head: tuple[str, str]
    cells: list[str]
    left: bool = False
    wrap: int = 0
    below: str = ""

    def natural(self) -> int:
        return max(len(x) for x in (*self.head, *self.cells))

    def narrowest(self) -> int:
        """The narrowest a text column wraps to: no word is broken."""
        words = [len(w) for cell in self.cells for w in cell.split()]
        return max(self.wrap, *map(len, self.head), *words)


@dataclass
class _Row:
    rank: int | None
    choice: _Choice
    loop: object
    opt: object


def _fraction(x: float) -> str:
    return f"{x:.6f}" if x >= 1e-5 else f"{x:.2e}"


def _limits_cell(row: _Row) -> str:
    labels = _limit_labels(row.loop)
    names = [_short(labels.get(n, n)) for n in row.opt.binding_constraints]
    if not names:
        return "-"
    from .errors import Status

    mark = " (not met)" if row.opt.status is Status.INFEASIBLE else ""
    return ", ".join(n + mark for n in names)


def _columns(rows: list[_Row], currency: str, ranked: bool) -> tuple[list[_Column], list[str]]:
    """The table's columns, and the legend of the per-pass columns of several reactions."""
    def cells(fn):
        return [fn(r.opt.state, r) if r.opt.state is not None else "" for r in rows]

    cols = []
    if ranked:
        cols.append(_Column(("", "rank"), [str(r.rank) if r.rank else "-" for r in rows]))
    cols.append(_Column(("", "code"), [f"A{r.choice.number}" for r in rows]))
    cols.append(_Column(("", "alternative"), [r.choice.label for r in rows], left=True,
                        wrap=12))
    cols.append(_Column(("purge", "fraction"), cells(lambda s, r: _fraction(s.purge_fraction))))
    cols.append(_Column(("inert at", "inlet %"),
                        cells(lambda s, r: f"{100 * s.inert_fraction_reactor_inlet:.2f}")))
    reactions = rows[0].loop.reactions
    legend = []
    for k, reaction in enumerate(reactions):
        tag = f"({k + 1})" if len(reactions) > 1 else ""
        cols.append(_Column(("per pass", tag), cells(lambda s, r, k=k: f"{s.conversion[k]:.4f}"),
                            below=f"per pass {tag} {reaction.name}" if k else ""))
        if tag:
            legend.append(f"{tag} {reaction.name} ({reaction.key_reactant})")
    cols.append(_Column(("TAC", f"{currency}/year"), cells(lambda s, r: f"{s.tac_per_year:,.0f}")))
    cols.append(_Column(("cost", f"{currency}/t"),
                        cells(lambda s, r: f"{s.cost_per_tonne_product:,.2f}"),
                        below=f"cost {currency}/t"))
    cols.append(_Column(("", "at limit"), cells(lambda s, r: _limits_cell(r)), left=True,
                        wrap=14, below="at limit"))
    return cols, ["per pass: per-pass conversion of the key reactant in "
                  + ", ".join(legend)] if legend else []


SEP = "  "


def _fit(cols: list[_Column], width: int) -> tuple[list[_Column], dict[int, int], list[_Column]]:
    """The columns shown and their widths, and those moved under the rows, to fit ``width``.

    Text columns wrap first (the last one first); then the movable columns
    move under their rows: extra reactions, the limits, the cost per tonne.
    """
    movable = [c for c in cols if c.below and c.head[0] == "per pass"]
    movable += [c for c in cols if c.below and c.head[1] == "at limit"]
    movable += [c for c in cols if c.below and c.head[0] == "cost"]
    shown, below = list(cols), []
    while True:
        widths = {id(c): c.natural() for c in shown}
        excess = sum(widths.values()) + len(SEP) * (len(shown) - 1) - width
        for c in reversed(shown):
            if excess <= 0:
                break
            if c.wrap:
                cut = min(excess, widths[id(c)] - c.narrowest())
                if cut > 0:
                    widths[id(c)] -= cut
                    excess -= cut
        if excess <= 0 or not movable:
            return shown, widths, below
        moved = movable.pop(0)
        shown.remove(moved)
        below.append(moved)


def _cell_lines(col: _Column, text: str, width: int) -> list[str]:
    if col.wrap and len(text) > width:
        return textwrap.wrap(text, width, break_on_hyphens=False) or [""]
    return [text]


def _pad(col: _Column, text: str, width: int) -> str:
    return f"{text:<{width}}" if col.left else f"{text:>{width}}"


def _table(rows: list[_Row], currency: str, *, ranked: bool) -> list[str]:
    """The result table, fitted to the terminal width."""
    width = _width()
    cols, legend = _columns(rows, currency, ranked)
    shown, widths, below = _fit(cols, width)
    out = []
    for h in (0, 1):
        if any(c.head[h] for c in shown):
            out.append(SEP.join(_pad(c, c.head[h], widths[id(c)]) for c in shown).rstrip())
    lead = [c for c in shown if c.head[1] in ("rank", "code", "alternative")]
    indent = sum(widths[id(c)] for c in lead) + len(SEP) * len(lead)
    for i, row in enumerate(rows):
        if row.opt.state is None:
            out += _message_row(row, i, lead, widths, indent, width)
            continue
        parts = [_cell_lines(c, c.cells[i], widths[id(c)]) for c in shown]
        for j in range(max(map(len, parts))):
            out.append(SEP.join(_pad(c, p[j] if j < len(p) else "", widths[id(c)])
                                for c, p in zip(shown, parts, strict=True)).rstrip())
        for c in below:
            if c.cells[i] not in ("", "-"):
                out += textwrap.wrap(f"{c.below}: {c.cells[i]}", width,
                                     initial_indent=" " * min(indent, 8),
                                     subsequent_indent=" " * min(indent + 2, 10))
        out += _indented(_report_lines(row.loop, row.opt), 2, width)
    out += _violations(rows, width)
    return out + [line for text in legend for line in textwrap.wrap(text, width)]


def _message_row(row: _Row, i: int, lead: list[_Column], widths, indent: int,
                 width: int) -> list[str]:
    """A row without a state: the lead columns, then the status and the reason."""
    text = f"{row.opt.status.value.upper()}: {row.opt.message}"
    parts = [_cell_lines(c, c.cells[i], widths[id(c)]) for c in lead]
    room = width - indent
    if room < 30:
        message, start = textwrap.wrap(text, width - 6), 6
    else:
        message, start = textwrap.wrap(text, room), indent
    lines = []
    for j in range(max(map(len, parts))):
        lines.append(SEP.join(_pad(c, p[j] if j < len(p) else "", widths[id(c)])
                              for c, p in zip(lead, parts, strict=True)))
    if start == indent:
        for j, m in enumerate(message):
            if j < len(lines):
                lines[j] = f"{lines[j]}{SEP}{m}"
            else:
                lines.append(" " * start + m)
    else:
        lines += [" " * start + m for m in message]
    return [line.rstrip() for line in lines]


def _violations(rows: list[_Row], width: int) -> list[str]:
    """Under the table: the reason of each row that has a state but breaks a limit."""
    from .errors import Status

    out = []
    for row in rows:
        if row.opt.state is not None and row.opt.status is not Status.OPTIMAL:
            out += textwrap.wrap(f"A{row.choice.number} {row.choice.label}: "
                                 f"{row.opt.status.value.upper()}: {row.opt.message}",
                                 width, subsequent_indent="    ")
    return out


def _print(lines, out) -> None:
    for line in lines:
        print(line, file=out)


def _wrapped(text: str, indent: int, out, hang: int = 2) -> None:
    for line in textwrap.wrap(text, _width(), initial_indent=" " * indent,
                              subsequent_indent=" " * (indent + hang), break_on_hyphens=False):
        print(line, file=out)


def _items(items: list[str], indent: int, out) -> None:
    """Items joined by commas, a line broken only between items where they fit."""
    width, lines, line = _width(), [], ""
    for item in items:
        trial = f"{line}, {item}" if line else item
        if line and indent + len(trial) > width:
            lines.append(line + ",")
            line = item
        else:
            line = trial
    lines.append(line)
    for text in lines:
        _wrapped(text, indent, out)


def _status_of(optima) -> int:
    from .errors import Status

    if any(o.status in (Status.FAILED, Status.TIME_LIMIT) for o in optima):
        return EXIT_FAILED
    if any(o.status is Status.INFEASIBLE for o in optima):
        return EXIT_INFEASIBLE
    return EXIT_OK


def _limit_lines(loop, state) -> list[str]:
    """Each state limit of the loop against its value in ``state``, with the verdict."""
    from . import limits

    lines = []
    for limit in limits.state_limits(loop):
        q = state.quantities
        if limits.violated([limit], q):
            verdict = "not met"
        elif limits.binding([limit], q):
            verdict = "at its bound"
        else:
            verdict = "met"
        lines.append(f"{verdict}: {limits.describe(limit, q)}")
    return lines or ["no state limits set"]


def _hours_text(hours: float) -> str:
    import math

    return "never (settles below the limit)" if math.isinf(hours) else f"{hours:,.1f} h"


#: What the hours to the inert limit need from the case.
INERT_LIMIT_NEEDS = "needs a loop gas inventory, an inert limit and inerts in the feed"

#: The events of the time to the inert limit, by their key in the results.
INERT_LIMIT_EVENTS = (("purge_closed", "purge closed"), ("recovery_down", "recovery unit down"))


def _report_lines(loop, opt) -> list[str]:
    """Under an alternative: its warnings, inlet ratios and hours to the inert limit."""
    from . import limits

    state = opt.state
    if state is None:
        return []
    lines = [f"warning: {w}" for w in state.warnings]
    for name, value in state.inlet_ratio.items():
        lines.append(f"inlet ratio {name} {value:.3f} ({limits.ratio_hold(loop, name)})")
    hours = opt.time_to_inert_limit_h or {}
    events = [f"{label} {_hours_text(hours[key])}" if key == "purge_closed" else
              f"{label}: {_hours_text(hours[key])}"
              for key, label in INERT_LIMIT_EVENTS if hours.get(key) is not None]
    if events:
        lines.append("hours to the inert limit: " + "; ".join(events))
    elif hours:
        lines.append(f"hours to the inert limit: n/a ({INERT_LIMIT_NEEDS})")
    return lines


def _indented(lines: list[str], indent: int, width: int) -> list[str]:
    out = []
    for text in lines:
        out += textwrap.wrap(text, width, initial_indent=" " * indent,
                             subsequent_indent=" " * (indent + 2), break_on_hyphens=False)
    return out


def _per_pass_text(loop, state) -> str:
    values = [f"{state.conversion[k]:.4f}" for k in range(len(loop.reactions))]
    if len(values) == 1:
        return f"per-pass conversion {values[0]}"
    return "per-pass conversion " + ", ".join(
        f"{v} ({r.name})" for r, v in zip(loop.reactions, values, strict=True))


# ---------------------------------------------------------------------------
# the commands


def _load(path: str):
    from .case import load_case

    return load_case(path)


def _alternatives(case):
    """The validated alternatives of a case and how the user can name them."""
    from .case import expand_alternatives

    alts = expand_alternatives(case)
    return alts, _choices([(name, choices) for name, choices, _ in alts])


def _reaction_line(r) -> str:
    eq = " + ".join(f"{-v:g} {c}" for c, v in r.stoichiometry.items() if v < 0)
    pr = " + ".join(f"{v:g} {c}" for c, v in r.stoichiometry.items() if v > 0)
    if r.per_pass == "fixed":
        how = f"per-pass conversion fixed at {r.per_pass_conversion:g}"
    elif r.per_pass in ("sized", "rate"):
        lo, hi = r.conversion_bounds
        how = f"per-pass conversion from the reactor size, between {lo:g} and {hi:g}"
    else:
        how = (f"per-pass conversion at {r.approach_to_equilibrium:g} of the approach to "
               "equilibrium")
    return f"reaction: {r.name}: {eq} -> {pr} (key reactant {r.key_reactant}; {how})"


def _basis_text(loop) -> str:
    if loop.basis == "production":
        t_d = loop.production_kmol_h * loop.data[loop.product].molar_mass_kg_kmol * 24 / 1000
        return (f"production {t_d:,.6g} t/d of {loop.product} "
                f"({loop.production_kmol_h:,.1f} kmol/h)")
    return f"make-up gas {loop.makeup_kmol_h:,.6g} kmol/h"


def cmd_demos(args) -> int:
    import tomllib

    out = sys.stdout
    _wrapped("bundled demo cases; every number in them is invented for illustration and "
             "describes no real plant, supplier or price:", 0, out)
    demos = demo_cases()
    width = max(map(len, demos))
    for name, path in demos.items():
        head = tomllib.loads(path.read_text(encoding="utf-8")).get("case", {})
        text = ": ".join(filter(None, (head.get("name"), head.get("description"))))
        for k, line in enumerate(textwrap.wrap(text, max(20, _width() - width - 4))):
            print(f"  {name if k == 0 else '':<{width}}  {line}", file=out)
    first = next(iter(demos))
    print(f"copy one to edit: purgeplan new my_case.toml --from {first}", file=out)
    print("run one as it is: purgeplan study CASE.toml (without CASE: the ammonia demo)",
          file=out)
    return EXIT_OK


def cmd_new(args) -> int:
    target = Path(args.path)
    if target.exists():
        raise CaseError(args.path, "exists; choose a new file name")
    where = _file_target("path", args.path, ".toml", "a case file is TOML")
    if args.demo is None:
        source = data_file("templates", "case_template.toml")
        what = "the case template"
    else:
        demos = demo_cases()
        key = args.demo.removesuffix(".toml").removesuffix("_demo")
        if key not in demos:
            raise CaseError(f"--from {args.demo}", "no such demo case; the demos are "
                            + ", ".join(demos) + " (see purgeplan demos)")
        source, what = demos[key], f"the {key} demo case (invented data)"
    text = source.read_text(encoding="utf-8")
    from .output.atomic import write_atomically

    _Writer().file(where, lambda path: write_atomically(
        path, lambda tmp: Path(tmp).write_text(text, encoding="utf-8")))
    print(f"wrote {args.path} from {what}; edit it, then run: purgeplan check {args.path}")
    return EXIT_OK


def cmd_check(args) -> int:
    from .build import build_loop
    from .errors import Status
    from .solve import evaluate_at

    case, digest = _load(args.case)
    alts, choices = _alternatives(case)
    loops = [build_loop(c, name) for name, _, c in alts]
    loop = loops[0]
    out = sys.stdout
    print(f"case: {case.case.name}  (sha256 {digest[:12]})", file=out)
    _wrapped(f"components: {', '.join(loop.components)}; inerts: "
             f"{', '.join(loop.inerts) or 'none'}", 0, out)
    for r in loop.reactions:
        _wrapped(_reaction_line(r), 0, out)
    _wrapped(f"loop: {loop.pressure_bar:g} bar, pressure drop {loop.pressure_drop_bar:g} bar, "
             f"{_basis_text(loop)}", 0, out)
    options = sorted(alts[0][1]) if all(c.label != c.name for c in choices) else []
    legend = (f"; a label gives the choice of {', '.join(options)} in turn" if options
              else "")
    _wrapped(f"alternatives: {len(loops)}, each at the case's purge fraction "
             f"{loop.purge_fraction:g}{legend}; --alternative takes the number, the label or "
             "the name (such as "
             f"'{choices[0].name}'):", 0, out)
    optima = []
    for choice, lp in zip(choices, loops, strict=True):
        opt = evaluate_at(lp, lp.purge_fraction)
        optima.append(opt)
        head = f"{choice.number:>3}  {choice.label}"
        if not options and choice.choices:
            head += "  (" + ", ".join(f"{k}={v}" for k, v in choice.choices.items()) + ")"
        _wrapped(head, 0, out, hang=5)
        if lp.purge_fraction != loop.purge_fraction:
            _wrapped(f"at its purge fraction {lp.purge_fraction:g}", 5, out)
        s = opt.state
        if s is None:
            what = "no steady state" if opt.status is Status.INFEASIBLE else \
                opt.status.value.upper()
            _wrapped(f"{what}: {opt.message}", 5, out)
            continue
        _items([_per_pass_text(lp, s), f"overall conversion {s.overall_conversion:.4f}",
                f"inert at the reactor inlet {100 * s.inert_fraction_reactor_inlet:.2f} %",
                f"recycle {sum(s.flows['recycle'].values()):,.0f} kmol/h",
                f"TAC {s.tac_per_year:,.0f} {lp.prices.currency}/year",
                f"cost per tonne {s.cost_per_tonne_product:,.2f} {lp.prices.currency}/t",
                f"balance error {s.balance_error:.1e}"], 5, out)
        for line in _limit_lines(lp, s):
            _wrapped(line, 5, out)
        _print(_indented(_report_lines(lp, opt), 5, _width()), out)
    failed = any(o.status in (Status.FAILED, Status.TIME_LIMIT) for o in optima)
    stateless = sum(o.state is None and o.status is Status.INFEASIBLE for o in optima)
    if stateless:
        _wrapped(f"case is valid, but {stateless} of {len(optima)} alternatives have no steady "
                 "state at the case's purge fraction (see above)", 0, out)
    else:
        print("case is valid", file=out)
    return EXIT_FAILED if failed else EXIT_INFEASIBLE if stateless else EXIT_OK


def _cost_lines(loop, state, out) -> None:
    """Each cost line by its label, the total, and the memo line, in a column of amounts."""
    from .costs import cost_lines

    labels = {line.key: line.label for line in cost_lines(loop)}
    entries = [(labels.get(k, k), f"{v:,.0f}") for k, v in state.costs.items()]
    entries += [("", "-" * 15), ("Total annualised cost", f"{state.tac_per_year:,.0f}"),
                ("Reactant lost in the purge and the liquid (memo: paid for in the make-up "
                 "gas, not in the total)", f"{state.lost_reactant_memo_per_year:,.0f}")]
    width = min(max(len(label) for label, _ in entries), _width() - 19)
    print(f"cost lines [{loop.prices.currency}/year]:", file=out)
    for label, amount in entries:
        lines = textwrap.wrap(label, width) or [""]
        for line in lines[:-1]:
            print(f"  {line}", file=out)
        print(f"  {lines[-1]:<{width}}  {amount:>15}", file=out)


def cmd_evaluate(args) -> int:
    from .build import build_loop
    from .solve import evaluate_at

    target = _json_target(args)
    out = _report_stream(target)
    a = args.purge_fraction
    if a is not None and not 0.0 < a < 1.0:
        raise CaseError("--purge-fraction", f"{a} must lie between 0 and 1 (exclusive)")
    case, digest = _load(args.case)
    alts, choices = _alternatives(case)
    if args.alternative is None and len(alts) > 1:
        raise _ChoiceError("--alternative", "this case has several alternatives; name one by "
                           "its number, label or name from the list above", _listing(choices))
    choice = _pick(choices, args.alternative) if args.alternative is not None else choices[0]
    name, options, c = alts[choice.number - 1]
    loop = build_loop(c, name)
    if a is None:
        a = loop.purge_fraction
    opt = evaluate_at(loop, a)
    head = f"alternative {choice.number}: {choice.label}"
    if choice.name != choice.label:
        head += f"  ({choice.name})"
    _wrapped(head, 0, out)
    default = " (the case's present value)" if args.purge_fraction is None else ""
    print(f"at the purge fraction {a:g}{default}:", file=out)
    _print(_table([_Row(None, choice, loop, opt)], loop.prices.currency, ranked=False), out)
    if opt.state is not None:
        _cost_lines(loop, opt.state, out)
        print("limits:", file=out)
        for line in _limit_lines(loop, opt.state):
            _wrapped(line, 2, out)
    if target is not None:
        from .output.json_out import alternatives_document
        from .study import Alternative

        _Writer().json(target, alternatives_document(
            digest, [Alternative(name, options, loop, opt)], ranked=False))
    return _status_of([opt])


def _time_limit(args) -> float | None:
    import math

    t = args.time_limit
    if t is not None and not (math.isfinite(t) and t > 0):
        raise CaseError("--time-limit", f"{t} must be a number of seconds above 0")
    return t


class _Progress:
    """Progress bars on standard error, shown only on a terminal and without --quiet."""

    def __init__(self, quiet: bool):
        self.on = not quiet and sys.stderr.isatty()
        self.bars = {}

    def __call__(self, stage: str, n: int, total: int) -> None:
        if not self.on:
            return
        if stage not in self.bars:
            from tqdm import tqdm

            self.close()
            self.bars[stage] = tqdm(total=total, desc=stage, file=sys.stderr, leave=False,
                                    unit="task")
        self.bars[stage].update(n)

    def close(self) -> None:
        for b in self.bars.values():
            b.close()


def _ranked_rows(ranked, choices: list[_Choice]) -> list[_Row]:
    by_name = {c.name: c for c in choices}
    return [_Row(a.rank, by_name[a.name], a.loop, a.optimum) for a in ranked]


def cmd_optimize(args) -> int:
    from .build import build_loop
    from .study import Alternative, Task, alternative_labels, rank, run_tasks

    target = _json_target(args)
    plots = _folder_target("--plots", args.plots)
    time_limit = _time_limit(args)
    out = _report_stream(target)
    case, digest = _load(args.case)
    alts, choices = _alternatives(case)
    picked = [alts[_pick(choices, args.alternative).number - 1]] if args.alternative \
        else alts
    from .cli_scenarios import jobs_and_client

    jobs, client = jobs_and_client(args)
    progress = _Progress(args.quiet or len(picked) == 1)
    progress("optimizing alternatives", 0, len(picked))
    loops = [(name, options, build_loop(c, name)) for name, options, c in picked]
    tasks = [Task(("base", name), loop, time_limit) for name, _, loop in loops]
    try:
        optima = run_tasks(tasks, jobs, client,
                           lambda n: progress("optimizing alternatives", n, len(picked)))
    finally:
        progress.close()
        if client is not None:
            client.close()
    codes = dict(zip([name for name, _, _ in alts],
                     alternative_labels(case, [(name, ch) for name, ch, _ in alts]), strict=True))
    done = [Alternative(name, options, loop, optima[("base", name)], code=codes[name][0],
                        label=codes[name][1]) for name, options, loop in loops]
    ranked = rank(done)
    currency = done[0].loop.prices.currency
    _print(_table(_ranked_rows(ranked, choices), currency, ranked=True), out)
    writer = _Writer()
    if target is not None:
        from .output.json_out import alternatives_document

        writer.json(target, alternatives_document(digest, ranked))
    if plots is not None:
        from .output.plots import plot_cost_curves
        from .study import StudyResult

        result = StudyResult(case.case.name, digest, __version__, currency, "", ranked)
        writer.plots(plots, [("cost_curves.png",
                              lambda path: plot_cost_curves(path, result))])
    if writer.written:
        print("wrote " + ", ".join(writer.written), file=out)
    return _status_of([a.optimum for a in done])


def _decision_lines(result, out) -> None:
    """The decision after the study's table: recommendation, break-even, levers that change it."""
    from .study import break_even_words, levers_changing_best, recommendation

    _wrapped(recommendation(result), 0, out)
    for be in result.break_even:
        _wrapped("break-even: " + break_even_words(be, result.currency), 0, out)
    if result.sensitivity:
        changes = levers_changing_best(result)
        frac = 100 * result.sensitivity_fraction
        _wrapped(f"levers that change the best alternative (each moved -/+{frac:g} % alone, "
                 "every alternative re-optimised): " + ("; ".join(changes) if changes else
                                                         "none"), 0, out)


def cmd_study(args) -> int:
    from .study import run_study

    workbook = _file_target("-o", args.output, ".xlsx", "the workbook is an Excel file")
    target = _json_target(args)
    plots = _folder_target("--plots", args.plots)
    time_limit = _time_limit(args)
    out = _report_stream(target)
    path = args.case or str(data_file("cases", DEMO_CASE))
    case, digest = _load(path)
    from .cli_scenarios import jobs_and_client

    jobs, client = jobs_and_client(args)
    progress = _Progress(args.quiet)
    try:
        result = run_study(case, digest, jobs=jobs, client=client, time_limit_s=time_limit,
                           progress=progress)
    finally:
        progress.close()
        if client is not None:
            client.close()
    choices = _choices(sorted((a.name, a.choices) for a in result.alternatives))
    print(f"study: {case.case.name} (case sha256 {digest[:12]})", file=out)
    _print(_table(_ranked_rows(result.alternatives, choices), result.currency, ranked=True),
           out)
    _decision_lines(result, out)
    if result.uncertainty is not None:
        from .output.uncertainty_out import terminal_lines

        table, notes = terminal_lines(result.uncertainty, result.currency,
                                      {a.name: a.title for a in result.alternatives})
        _print(table, out)
        for line in notes:
            _wrapped(line, 0, out)
    from .output.workbook import write_workbook

    writer = _Writer()
    writer.file(workbook, lambda p: write_workbook(p, result))
    if target is not None:
        from .output.json_out import study_document

        writer.json(target, study_document(result))
    if plots is not None:
        from .output.plots import plot_cost_curves, plot_sensitivity

        pictures = [("cost_curves.png", lambda p: plot_cost_curves(p, result)),
                    ("sensitivity.png", lambda p: plot_sensitivity(p, result))]
        if result.uncertainty is not None:
            from .output.uncertainty_out import plot_uncertainty

            pictures.append(("price_scenarios.png", lambda p: plot_uncertainty(
                p, result.uncertainty, result.currency,
                {a.name: a.title for a in result.alternatives})))
        writer.plots(plots, pictures)
    print("wrote " + ", ".join(writer.written), file=out)
    print(CAUTION, file=sys.stderr)
    return _status_of([a.optimum for a in result.alternatives])


COMMANDS = {"demos": cmd_demos, "new": cmd_new, "check": cmd_check, "evaluate": cmd_evaluate,
            "optimize": cmd_optimize, "study": cmd_study,
            "scenarios": lambda args: _scenarios(args)}  # imported only when run


def _scenarios(args) -> int:
    from .cli_scenarios import cmd_scenarios

    return cmd_scenarios(args)


def _quiet_stdout() -> None:
    """After a closed pipe (``purgeplan ... | head``): drop what is left of the report."""
    import os

    devnull = os.open(os.devnull, os.O_WRONLY)
    os.dup2(devnull, sys.stdout.fileno())


def main(argv: list[str] | None = None) -> int:
    import logging
    import signal
    import threading

    from .errors import NoSteadyStateError

    def _terminate(signum, frame):  # a polite kill cleans up like Ctrl-C
        raise KeyboardInterrupt

    if threading.current_thread() is threading.main_thread():
        signal.signal(signal.SIGTERM, _terminate)
    # the library's log records are notes for developers: none reach the terminal unasked
    logging.getLogger("purgeplan").addHandler(logging.NullHandler())
    parser = _parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help(sys.stderr)
        return _fail("name a command; they are listed above", EXIT_BAD_INPUT)
    import warnings

    try:
        with warnings.catch_warnings():
            # library warnings would break the one-line contract of the messages
            warnings.simplefilter("ignore")
            return COMMANDS[args.command](args)
    except _ChoiceError as exc:
        stream = sys.stderr if getattr(args, "json", None) == STDOUT else sys.stdout
        print("alternatives (number, label, name):", file=stream)
        _print(exc.listing, stream)
        return _fail(str(exc), EXIT_BAD_INPUT)
    except CaseError as exc:
        return _fail(str(exc), EXIT_BAD_INPUT)
    except NoSteadyStateError as exc:
        return _fail(str(exc), EXIT_INFEASIBLE)
    except _WriteFailure as exc:
        return _fail(str(exc), EXIT_WRITE)
    except KeyboardInterrupt:
        return _fail("interrupted; an output being written was left as it was",
                     EXIT_INTERRUPTED)
    except BrokenPipeError:
        _quiet_stdout()
        return EXIT_WRITE
    except OSError as exc:
        return _fail(f"cannot write output: {exc.strerror or exc}", EXIT_WRITE)
    except Exception as exc:  # a defect: one line, not a traceback
        return _fail(f"internal error ({type(exc).__name__}: {exc}); please report it with "
                     "the case file", EXIT_INTERNAL)


if __name__ == "__main__":
    sys.exit(main())
