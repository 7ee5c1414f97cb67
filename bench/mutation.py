"""Mutation testing of the core modules with mutmut, and a kill rate per module.

Not part of CI: a full run takes a long while on two cores.  From a clean checkout::

    pip install -e '.[test,mutation]'
    python bench/mutation.py                  # fresh full run, then the table
    python bench/mutation.py --survivors      # the same, then the diff of each survivor
    python bench/mutation.py --report         # the table of the last run only, no run
    python bench/mutation.py --rerun-survivors   # re-test only the last run's survivors
    python bench/mutation.py --modules costs results equations   # those modules only

(mutmut forgets every recorded verdict when ``[tool.mutmut]`` changes the tests it
selects, so ``--rerun-survivors`` after such a change runs everything again.)

Which files are mutated and which tests run is set in ``[tool.mutmut]`` of
``pyproject.toml``: the cost, balance, loop, search, limit and fixed-point modules,
against the fast test files (the slow CLI, workbook, study, fuzz and reliability
tests are left out).  mutmut copies the package and the tests into ``./mutants``
(ignored by git), finds which tests reach each function, and runs those tests
once per mutant; a mutant is *killed* when a test fails.

Columns of the table:

``mutants``
    mutants made in the module;
``killed``
    a test failed;
``timeout``
    the tests ran past mutmut's time limit (counted apart, not as killed);
``suspicious``
    the test run ended in an unexpected way;
``no tests``
    no selected test reaches the mutated function;
``survived``
    every test passed;
``kill rate``
    killed / mutants.

The "cost and balance" row adds up ``costs.py``, ``results.py`` and
``equations.py``.  Options: ``--max-children N`` worker processes (default: the
number of cores); ``--keep`` reuses ``./mutants`` and mutmut's cache of results
instead of starting afresh.  Surviving mutants that cannot change behaviour are
listed with the reason in ``docs/mutation.md``.

This file is also a pytest plugin, loaded in the mutation runs only (``-p
bench.mutation`` in ``[tool.mutmut]``).  mutmut links each function to the tests
during which it ran, and tries a mutant against those tests alone.  A module- or
session-scoped fixture runs once, during the setup of the first test that asks for
it, so the functions it calls would be linked to that test only, and their mutants
never tried against the other tests that use the fixture's value.  The plugin
records what each such fixture ran and links it to every test that uses it.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import time
import tomllib
from collections import Counter
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
COST_AND_BALANCE = ("costs.py", "results.py", "equations.py")
COLUMNS = ("killed", "timeout", "suspicious", "no tests", "survived")


def _status_by_exit_code():
    from mutmut.stats import status_by_exit_code

    return status_by_exit_code


def mutated_files() -> list[str]:
    """The files named in ``[tool.mutmut] only_mutate``, in that order."""
    config = tomllib.loads((ROOT / "pyproject.toml").read_text("utf-8"))["tool"]["mutmut"]
    return list(config["only_mutate"])


def results_by_file() -> dict[str, dict[str, str]]:
    """Status of every mutant of every mutated file, from mutmut's records in ./mutants."""
    status = _status_by_exit_code()
    out = {}
    for path in mutated_files():
        meta = ROOT / "mutants" / (path + ".meta")
        if not meta.exists():
            continue
        codes = json.loads(meta.read_text("utf-8"))["exit_code_by_key"]
        out[path] = {name: status[code] for name, code in codes.items()}
    return out


def _row(label: str, counts: Counter, total: int) -> str:
    rate = f"{100.0 * counts['killed'] / total:.1f} %" if total else "-"
    cells = "".join(f"{counts[c]:>11d}" for c in COLUMNS)
    return f"{label:<26}{total:>8d}{cells}{rate:>11}"


def table(results: dict[str, dict[str, str]]) -> str:
    """Mutants, killed, timeouts, suspicious, untested and survivors per module."""
    head = f"{'module':<26}{'mutants':>8}" + "".join(f"{c:>11}" for c in COLUMNS)
    lines = [head + f"{'kill rate':>11}", "-" * (len(head) + 11)]
    groups = {"cost and balance": Counter(), "all": Counter()}
    sizes = dict.fromkeys(groups, 0)
    for path, statuses in results.items():
        counts = Counter(statuses.values())
        lines.append(_row(Path(path).name, counts, len(statuses)))
        for group in groups:
            if group == "all" or Path(path).name in COST_AND_BALANCE:
                groups[group].update(counts)
                sizes[group] += len(statuses)
    lines.append("-" * (len(head) + 11))
    for group, counts in groups.items():
        lines.append(_row(group, counts, sizes[group]))
    other = {s for statuses in results.values() for s in statuses.values()} - {
        *COLUMNS, "not checked"}
    if other:
        lines.append(f"other outcomes (in 'mutants' only): {sorted(other)}")
    unchecked = sum(s == "not checked" for st in results.values() for s in st.values())
    if unchecked:
        lines.append(f"{unchecked} mutants not checked yet (an interrupted run?)")
    return "\n".join(lines)


def survivors(results: dict[str, dict[str, str]]) -> list[str]:
    return [name for statuses in results.values()
            for name, status in statuses.items() if status in ("survived", "no tests")]


def mutmut(*args: str) -> int:
    return subprocess.call([sys.executable, "-m", "mutmut", *args], cwd=ROOT)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--report", action="store_true", help="print the last run's table only")
    parser.add_argument("--survivors", action="store_true", help="print each survivor's diff")
    parser.add_argument("--keep", action="store_true", help="reuse ./mutants and its cache")
    parser.add_argument("--rerun-survivors", action="store_true",
                        help="re-test only the survivors of the last run")
    parser.add_argument("--modules", nargs="+", metavar="NAME",
                        help="test only the mutants of these modules (costs, results, ...)")
    parser.add_argument("--max-children", type=int, default=os.cpu_count() or 1)
    args = parser.parse_args(argv)

    elapsed = None
    if not args.report:
        names = []
        if args.rerun_survivors:
            names = survivors(results_by_file())
            if not names:
                print("no survivors recorded: nothing to re-run")
                return 1
        elif not args.keep:
            shutil.rmtree(ROOT / "mutants", ignore_errors=True)
        if args.modules and not names:
            names = [f"purgeplan.{m}.*" for m in args.modules]
        start = time.monotonic()
        code = mutmut("run", "--max-children", str(args.max_children), *names)
        elapsed = time.monotonic() - start
        if code != 0:
            print(f"mutmut run exited with {code}", file=sys.stderr)
            return code

    results = results_by_file()
    if not results:
        print("no mutation results in ./mutants: run without --report first", file=sys.stderr)
        return 1
    print()
    print(table(results))
    if elapsed is not None:
        print(f"\nwall time of the run: {elapsed:.0f} s with {args.max_children} workers")
    left = survivors(results)
    if args.survivors:
        for name in left:
            print()
            mutmut("show", name)
    elif left:
        print(f"\n{len(left)} survivors: python bench/mutation.py --report --survivors")
    return 0


# ---------------------------------------------------------------------------
# the pytest plugin

#: functions each wider-scoped fixture ran during its setup, by fixture definition
_FIXTURE_HITS: dict[int, set[str]] = {}


def _mutmut_hits() -> set[str]:
    """mutmut's record of the functions run since the last test's teardown."""
    from mutmut.state import state

    return state()._stats


@pytest.hookimpl(hookwrapper=True)
def pytest_fixture_setup(fixturedef, request):
    if fixturedef.scope == "function":
        yield
        return
    hits = _mutmut_hits()
    before = set(hits)
    hits.clear()
    try:
        yield
    finally:
        _FIXTURE_HITS.setdefault(id(fixturedef), set()).update(hits)
        hits.update(before)


@pytest.hookimpl(hookwrapper=True)
def pytest_runtest_call(item):
    yield
    defs = item._fixtureinfo.name2fixturedefs
    hits = _mutmut_hits()
    for name in item.fixturenames:
        if defs.get(name):
            hits.update(_FIXTURE_HITS.get(id(defs[name][-1]), ()))


if __name__ == "__main__":
    sys.exit(main())
