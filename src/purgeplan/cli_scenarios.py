"""The ``scenarios`` command: every alternative re-optimised in each price scenario.

Kept beside :mod:`purgeplan.cli`, whose helpers for paths, outputs and
progress it uses.
"""

from __future__ import annotations

import sys


def add_parser(sub, add_case, add_json, add_plots, add_quiet) -> None:
    """The command's arguments on the main parser's subcommands."""
    u = sub.add_parser(
        "scenarios", help="probability that each alternative is best under uncertain prices",
        description="Draw the price scenarios of the case's [uncertainty] table, optimize "
                    "every alternative's purge fraction again in each, and report the "
                    "probability that each is the best, its TAC percentiles, its expected "
                    "regret and which uncertain input drives the choice.")
    add_case(u)
    add_json(u)
    add_plots(u, "TAC distribution and probability of being best")
    add_jobs(u)
    add_quiet(u)


def add_jobs(p) -> None:
    p.add_argument("--jobs", type=int, default=1, metavar="N",
                   help="worker processes; 1 runs in-process, 0 one per core [default: 1]")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="run on the Dask distributed cluster at this scheduler address "
                        "(for instance tcp://10.0.0.5:8786); needs purgeplan[cluster]")


def jobs_and_client(args):
    """The worker count and the Dask client the options ask for (CaseError if unusable)."""
    import os

    from .errors import CaseError

    if args.jobs < 0:
        raise CaseError("--jobs", f"{args.jobs} must be 0 (one per core) or more")
    jobs = args.jobs if args.jobs > 0 else (os.cpu_count() or 1)
    if getattr(args, "scheduler", None) is None:
        return jobs, None
    try:
        from dask.distributed import Client
    except ImportError:
        raise CaseError("--scheduler", "needs Dask distributed: pip install "
                        "'purgeplan[cluster]'") from None
    try:
        return jobs, Client(args.scheduler, timeout="10s")
    except (OSError, TimeoutError, ValueError) as exc:
        raise CaseError("--scheduler", f"no Dask scheduler answers at {args.scheduler} "
                        f"({exc})") from None


def labels_of(case, alts) -> dict[str, str]:
    """Code and label of each alternative by name, as the study gives them ("A5 ...")."""
    from .study import alternative_labels

    codes = alternative_labels(case, [(name, choices) for name, choices, _ in alts])
    return {name: f"{code} {label}".strip()
            for (name, _, _), (code, label) in zip(alts, codes, strict=True)}


def cmd_scenarios(args) -> int:
    from . import cli
    from .build import build_loop
    from .errors import CaseError
    from .output.uncertainty_out import plot_uncertainty, terminal_lines, uncertainty_block
    from .uncertainty import run_uncertainty

    target = cli._json_target(args)
    plots = cli._folder_target("--plots", args.plots)
    out = cli._report_stream(target)
    case, digest = cli._load(args.case)
    if case.uncertainty is None:
        raise CaseError("uncertainty", "the case has no [uncertainty] table; see the template "
                        "(purgeplan new CASE.toml) for an example")
    jobs, client = jobs_and_client(args)
    alts, _ = cli._alternatives(case)
    loops = [(name, build_loop(c, name)) for name, _, c in alts]
    progress = cli._Progress(args.quiet)
    try:
        result = run_uncertainty(case, loops, jobs=jobs, client=client, progress=progress)
    finally:
        progress.close()
        if client is not None:
            client.close()
    labels = labels_of(case, alts)
    print(f"scenarios: {case.case.name} (case sha256 {digest[:12]})", file=out)
    table, notes = terminal_lines(result, case.economics.currency, labels)
    cli._print(table, out)
    for line in notes:
        cli._wrapped(line, 0, out)
    if result.interrupted:
        print("interrupted: the finished scenarios are shown above; nothing was written",
              file=sys.stderr)
        return cli.EXIT_INTERRUPTED
    writer = cli._Writer()
    if target is not None:
        doc = {"case_name": case.case.name, "case_sha256": digest,
               "currency": case.economics.currency, "uncertainty": uncertainty_block(result)}
        writer.json(target, doc)
    if plots is not None:
        writer.plots(plots, [("price_scenarios.png", lambda p: plot_uncertainty(
            p, result, case.economics.currency, labels))])
    if writer.written:
        print("wrote " + ", ".join(writer.written), file=out)
    print(cli.CAUTION, file=sys.stderr)
    return cli.EXIT_OK if result.finished else cli.EXIT_INFEASIBLE
