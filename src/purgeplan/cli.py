"""Command line: a thin shell over the library.

Exit status: 0 success; 2 bad input (the message names the field); 3 a valid
case in which some alternative is infeasible (the reason is given); 4 a
solver failure or time limit in some alternative; 1 an internal error.
"""

from __future__ import annotations

import argparse
import difflib
import sys
from pathlib import Path

from . import __version__
from .cautions import CAUTION

EXIT_OK, EXIT_BAD_INPUT, EXIT_INFEASIBLE, EXIT_FAILED, EXIT_INTERNAL = 0, 2, 3, 4, 1


def data_file(kind: str, name: str) -> Path:
    """A file shipped with the package (demo cases, templates)."""
    from importlib.resources import files

    shipped = Path(str(files("purgeplan"))) / kind / name
    if shipped.exists():
        return shipped
    return Path(__file__).resolve().parents[2] / kind / name


DEMO_CASE = "ammonia_demo.toml"


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="purgeplan",
        description="Lowest-cost purge fraction and inert setpoint for gas recycle loops "
                    "(ammonia, methanol, hydrogenation), ranked design alternatives and a "
                    "workbook economists can re-price.",
        epilog=CAUTION + "  Exit status: 0 done, 2 bad input, 3 infeasible alternative, "
                         "4 solver failure or time limit.")
    p.add_argument("--version", action="version", version=f"purgeplan {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")

    c = sub.add_parser("check", help="validate a case file and summarise the loop")
    c.add_argument("case", help="case file (TOML)")

    n = sub.add_parser("new", help="write a fully commented case template")
    n.add_argument("path", help="where to write the template (refuses to overwrite)")

    e = sub.add_parser("evaluate", help="steady state and costs at a given purge fraction")
    e.add_argument("case")
    e.add_argument("--alternative", required=False, help="alternative name (see `check`)")
    e.add_argument("--purge-fraction", type=float, required=True,
                   help="fraction of separator vapour purged [-]")
    e.add_argument("--json", type=Path, help="write results as JSON here")

    o = sub.add_parser("optimize", help="lowest-cost purge fraction of each alternative")
    o.add_argument("case")
    o.add_argument("--alternative", help="optimise only this alternative")
    o.add_argument("--json", type=Path, help="write results as JSON here")
    o.add_argument("--time-limit", type=float, help="wall-clock limit per alternative [s]")

    s = sub.add_parser("study", help="optimise, rank, break-even, sensitivity and workbook")
    s.add_argument("case", nargs="?", help="case file; default: the bundled ammonia demo")
    s.add_argument("-o", "--output", type=Path, default=Path("purgeplan_study.xlsx"),
                   help="workbook to write [default: purgeplan_study.xlsx]")
    s.add_argument("--json", type=Path, help="write results as JSON here")
    s.add_argument("--plots", type=Path, help="folder for PNG plots")
    s.add_argument("--jobs", type=int, default=1,
                   help="worker processes; 1 runs in-process, 0 one per core [default: 1]")
    s.add_argument("--time-limit", type=float, help="wall-clock limit per alternative [s]")
    s.add_argument("--quiet", action="store_true", help="no progress bar")
    return p


def _fail(message: str, status: int) -> int:
    one_line = " ".join(str(message).split())
    print(f"purgeplan: error: {one_line}", file=sys.stderr)
    return status


def _load(path: str):
    from .case import load_case

    return load_case(path)


def _pick(alternatives, name: str | None):
    if name is None:
        return alternatives
    hits = [a for a in alternatives if a[0] == name]
    if not hits:
        from .errors import CaseError

        names = [a[0] for a in alternatives]
        hint = difflib.get_close_matches(name, names, n=1, cutoff=0.3)
        fix = f"; did you mean '{hint[0]}'?" if hint else f"; alternatives: {names}"
        raise CaseError("--alternative", f"no alternative named '{name}'{fix}")
    return hits


def _status_of(optima) -> int:
    from .errors import Status

    if any(o.status in (Status.FAILED, Status.TIME_LIMIT) for o in optima):
        return EXIT_FAILED
    if any(o.status is Status.INFEASIBLE for o in optima):
        return EXIT_INFEASIBLE
    return EXIT_OK


def _print_table(rows, currency: str) -> None:
    width = max([len("alternative")] + [len(name) for _, name, _ in rows])
    print(f"{'rank':>4}  {'alternative':<{width}} {'purge fraction':>14} "
          f"{'inert at inlet':>14} {'per pass':>8} {'TAC ' + currency + '/year':>18} "
          f"{currency + '/t':>9}  binding")
    for rank, name, opt in rows:
        s = opt.state
        if s is None:
            print(f"{'-':>4}  {name:<{width}} {opt.status.value.upper()}: {opt.message}")
            continue
        print(f"{rank if rank else '':>4}  {name:<{width}} {s.purge_fraction:14.6f} "
              f"{100 * s.inert_fraction_reactor_inlet:13.2f}% {s.first_reaction_conversion:8.4f} "
              f"{s.tac_per_year:18,.0f} {s.cost_per_tonne_product:9.2f}  "
              f"{', '.join(opt.binding_constraints) or '-'}")


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
        lines.append(f"    {verdict}: {limits.describe(limit, q)}")
    return lines or ["    no state limits set"]


def cmd_check(args) -> int:
    from .build import build_loop
    from .case import expand_alternatives
    from .engine import steady_state
    from .errors import NoSteadyStateError

    case, digest = _load(args.case)
    alts = expand_alternatives(case)
    loops = [(name, build_loop(c, name)) for name, _, c in alts]
    loop = loops[0][1]
    print(f"case: {case.case.name}  (sha256 {digest[:12]})")
    print(f"components: {', '.join(loop.components)}; inerts: {', '.join(loop.inerts) or 'none'}")
    for r in loop.reactions:
        eq = " + ".join(f"{-v:g} {c}" for c, v in r.stoichiometry.items() if v < 0)
        pr = " + ".join(f"{v:g} {c}" for c, v in r.stoichiometry.items() if v > 0)
        print(f"reaction: {r.name}: {eq} -> {pr}  (key {r.key_reactant}, per pass: {r.per_pass})")
    basis = (f"production {loop.production_kmol_h:,.1f} kmol/h of {loop.product}"
             if loop.basis == "production" else f"make-up {loop.makeup_kmol_h:,.1f} kmol/h")
    print(f"loop: {loop.pressure_bar:g} bar, pressure drop {loop.pressure_drop_bar:g} bar, "
          f"{basis}")
    print(f"alternatives: {len(loops)}; steady state at the case purge fraction "
          f"{loop.purge_fraction:g}:")
    for name, lp_ in loops:
        try:
            s = steady_state(lp_)
        except NoSteadyStateError as exc:
            print(f"  {name}: {exc}")
            continue
        print(f"  {name}: per-pass {s.first_reaction_conversion:.4f}, overall "
              f"{s.overall_conversion:.4f}, inert at inlet "
              f"{100 * s.inert_fraction_reactor_inlet:.2f} %, recycle "
              f"{sum(s.flows['recycle'].values()):,.0f} kmol/h, TAC "
              f"{s.tac_per_year:,.0f} {lp_.prices.currency}/yr, balance error "
              f"{s.balance_error:.1e}")
        for line in _limit_lines(lp_, s):
            print(line)
    print("case is valid")
    return EXIT_OK


def cmd_new(args) -> int:
    from .errors import CaseError

    target = Path(args.path)
    if target.exists():
        raise CaseError("path", f"{target} exists; choose a new file name")
    if not target.parent.is_dir():
        raise CaseError("path", f"folder {target.parent} does not exist; create it first")
    text = data_file("templates", "case_template.toml").read_text(encoding="utf-8")
    from .output.atomic import write_atomically

    write_atomically(target, lambda tmp: Path(tmp).write_text(text, encoding="utf-8"))
    print(f"wrote {target}; edit it, then run: purgeplan check {target}")
    return EXIT_OK


def cmd_evaluate(args) -> int:
    from .build import build_loop
    from .case import expand_alternatives
    from .errors import CaseError
    from .solve import evaluate_at

    case, digest = _load(args.case)
    alts = expand_alternatives(case)
    if args.alternative is None and len(alts) > 1:
        raise CaseError("--alternative", "this case has several alternatives; name one: "
                        + "; ".join(a[0] for a in alts))
    name, choices, c = _pick(alts, args.alternative or alts[0][0])[0]
    a = args.purge_fraction
    if not 0.0 < a < 1.0:
        raise CaseError("--purge-fraction", f"{a} must lie between 0 and 1 (exclusive)")
    loop = build_loop(c, name)
    opt = evaluate_at(loop, a)
    _print_table([(None, name, opt)], loop.prices.currency)
    if opt.state is not None:
        for key, value in opt.state.costs.items():
            print(f"    {key:<32} {value:16,.0f} {loop.prices.currency}/yr")
    if args.json:
        from .output.json_out import alternatives_document, write_json
        from .study import Alternative

        write_json(args.json, alternatives_document(
            digest, [Alternative(name, choices, loop, opt)], ranked=False))
    return _status_of([opt])


def cmd_optimize(args) -> int:
    from .build import build_loop
    from .case import expand_alternatives
    from .solve import optimise
    from .study import Alternative, rank

    case, digest = _load(args.case)
    picked = _pick(expand_alternatives(case), args.alternative)
    alts = []
    for name, choices, c in picked:
        loop = build_loop(c, name)
        alts.append(Alternative(name, choices, loop,
                                optimise(loop, time_limit_s=args.time_limit)))
    ranked = rank(alts)
    _print_table([(a.rank, a.name, a.optimum) for a in ranked], alts[0].loop.prices.currency)
    if args.json:
        from .output.json_out import alternatives_document, write_json

        write_json(args.json, alternatives_document(digest, ranked))
    return _status_of([a.optimum for a in alts])


def cmd_study(args) -> int:
    import os

    from tqdm import tqdm

    from .study import run_study

    path = args.case or str(data_file("cases", DEMO_CASE))
    case, digest = _load(path)
    jobs = args.jobs if args.jobs > 0 else (os.cpu_count() or 1)
    bars: dict[str, tqdm] = {}

    def progress(stage: str, n: int, total: int) -> None:
        if args.quiet:
            return
        if stage not in bars:
            for b in bars.values():
                b.close()
            bars[stage] = tqdm(total=total, desc=stage, file=sys.stderr, leave=False,
                               unit="task")
        bars[stage].update(n)

    result = run_study(case, digest, jobs=jobs, time_limit_s=args.time_limit, progress=progress)
    for b in bars.values():
        b.close()
    print(f"study: {case.case.name} (case sha256 {digest[:12]})")
    _print_table([(a.rank, a.name, a.optimum) for a in result.alternatives], result.currency)
    for be in result.break_even:
        if be.premium_per_kmol is not None:
            print(f"break-even: {be.grade} ties with {be.base_grade} at a premium of "
                  f"{be.premium_per_kmol:.4f} {result.currency}/kmol "
                  f"({be.premium_percent:.2f} % of the base price)")
        else:
            print(f"break-even: {be.grade} against {be.base_grade}: {be.note}")
    from .output.workbook import write_workbook

    written = [write_workbook(args.output, result)]
    if args.json:
        from .output.json_out import study_document, write_json

        written.append(write_json(args.json, study_document(result)))
    if args.plots:
        from .output.plots import plot_cost_curves, plot_sensitivity

        args.plots.mkdir(parents=True, exist_ok=True)
        written.append(plot_cost_curves(args.plots / "cost_curves.png", result))
        written.append(plot_sensitivity(args.plots / "sensitivity.png", result))
    print("wrote " + ", ".join(str(w) for w in written))
    print(CAUTION, file=sys.stderr)
    return _status_of([a.optimum for a in result.alternatives])


COMMANDS = {"check": cmd_check, "new": cmd_new, "evaluate": cmd_evaluate,
            "optimize": cmd_optimize, "study": cmd_study}


def main(argv: list[str] | None = None) -> int:
    import signal
    import threading

    from .errors import CaseError, NoSteadyStateError

    def _terminate(signum, frame):  # a polite kill cleans up like Ctrl-C
        raise KeyboardInterrupt

    if threading.current_thread() is threading.main_thread():
        signal.signal(signal.SIGTERM, _terminate)
    parser = _parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return EXIT_OK
    import warnings

    try:
        with warnings.catch_warnings():
            # library warnings would break the one-line contract of the messages
            warnings.simplefilter("ignore")
            return COMMANDS[args.command](args)
    except CaseError as exc:
        return _fail(str(exc), EXIT_BAD_INPUT)
    except NoSteadyStateError as exc:
        return _fail(str(exc), EXIT_INFEASIBLE)
    except KeyboardInterrupt:
        return _fail("interrupted; no output was changed", 130)
    except OSError as exc:
        return _fail(f"cannot write output: {exc}", EXIT_BAD_INPUT)
    except Exception as exc:  # a defect: one line, not a traceback
        return _fail(f"internal error ({type(exc).__name__}: {exc}); please report it with "
                     "the case file", EXIT_INTERNAL)


if __name__ == "__main__":
    sys.exit(main())
