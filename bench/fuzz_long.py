"""Long fuzz run: thousands of mutated case files through `purgeplan check`.

The mutation generator lives in tests/test_fuzz.py (the CI fuzz suite); this
script drives it from a seeded random generator instead of Hypothesis, runs
every case through ``check`` in-process and a sample of the valid ones through
``optimize --alternative <first alternative>``, and prints how many cases were
tried and how many were refused for each reason.  Any exit status outside the
contract (check: 0, 2, 3; optimize: also 4), more than one stderr line or a
traceback is listed as a contract violation with the mutations that caused it.

Run: python bench/fuzz_long.py [--cases 5000] [--optimize 50] [--seed 1]
     [--max-depth 3000] [--perturbed 0.2] [--time-limit 20] [--save DIR]

Violations are grouped by command, kind and normalised reason.  The exit
status is 1 when any contract violation was found, else 0.
"""

from __future__ import annotations

import argparse
import importlib.util
import random
import re
import sys
import tempfile
import time
from collections import Counter, defaultdict
from dataclasses import dataclass, field
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _load_fuzz_module():
    """tests/test_fuzz.py as module ``test_fuzz`` (importable by its worker processes too)."""
    tests = str(ROOT / "tests")
    if tests not in sys.path:
        sys.path.insert(0, tests)
    spec = importlib.util.spec_from_file_location("test_fuzz", ROOT / "tests" / "test_fuzz.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module
    spec.loader.exec_module(module)
    return module


fuzz = _load_fuzz_module()

_PREFIX = "purgeplan: error: "
_OPTION_PREFIX = re.compile(r"^options\.\{[^}]*\}: ")
_KEY_PATH = re.compile(r"^[^\s:]+: ")
_REASON_STARTS = ("unknown key", "missing key", "input should", "string should", "list should",
                  "dictionary should", "unknown component", "unknown source", "unknown choice",
                  "unknown option", "unknown recovery unit", "required when", "value error",
                  "must be", "tables and arrays nest")
_CUTS = (", found", "; did you mean", "; allowed keys", "; declared", ": net", " (at line",
         "; options:", "; alternatives:", ": give ")


def reason_of(stderr: str) -> str:
    """A normalised reason for a one-line error: the message without key path and values.

    Messages read ``path = value: reason`` or ``path: reason``; both lose the part
    before the reason.
    """
    line = stderr.strip().splitlines()[0] if stderr.strip() else "(no message)"
    line = line.removeprefix(_PREFIX)
    if line.startswith("internal error"):
        return re.sub(r"\(([A-Za-z]+Error).*", r"(\1)", line)
    toml = re.search(r"is not valid TOML: (.*?)(?: \(at (?:line \d+, column \d+|end of "
                     r"document)\))?$", line)
    if toml:
        return "not valid TOML: " + re.sub(r"\(.*\)", "(...)", toml.group(1))
    if "is not UTF-8" in line:
        return "not UTF-8"
    if "bytes; the limit is" in line:
        return "file over the size limit"
    if "nests deeper than the TOML reader" in line:
        return "nests deeper than the TOML reader can follow"
    line = _OPTION_PREFIX.sub("", line)
    starts = [line.find(": " + word) for word in _REASON_STARTS if ": " + word in line]
    line = line[min(starts) + 2:] if starts else _KEY_PATH.sub("", line, count=1)
    for cut in _CUTS:
        at = line.find(cut)
        if at > 0:
            line = line[:at] + ("; did you mean ..." if cut == "; did you mean" else "")
    line = re.sub(r"'[^']*'", "'...'", line)
    line = re.sub(r"-?\b\d[\d.e+-]*\b", "N", line)
    if line.startswith("missing key"):
        return "missing key"
    return line[:90]


def solver_reason(stdout: str) -> str:
    """The normalised reason on the FAILED / TIME_LIMIT row of the optimize table."""
    for line in stdout.splitlines():
        hit = re.search(r"\b(FAILED|TIME_LIMIT): (.*)$", line)
        if hit:
            return hit.group(1) + ": " + re.sub(r"-?\b\d[\d.e+-]*\b", "N", hit.group(2))[:80]
    return "(no reason on stdout)"


def _arguments(argv: list[str] | None) -> argparse.Namespace:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--cases", type=int, default=5000, help="cases through check [5000]")
    p.add_argument("--optimize", type=int, default=50,
                   help="valid cases also run through optimize [50]")
    p.add_argument("--seed", type=int, default=1, help="random seed [1]")
    p.add_argument("--max-depth", type=int, default=fuzz.MAX_DEPTH,
                   help=f"deepest nesting the byte mutations append [{fuzz.MAX_DEPTH}]; "
                        f"dict mutations stop at {fuzz.DOC_DEPTH}")
    p.add_argument("--time-limit", type=float, default=20.0,
                   help="optimize --time-limit [20 s]; no answer after 3x + 30 s is a hang")
    p.add_argument("--perturbed", type=float, default=0.2,
                   help="share of cases that only scale a few numbers (mostly valid) [0.2]")
    p.add_argument("--save", type=Path, help="folder for the case files that broke the contract")
    p.add_argument("--show", type=int, default=3, help="examples shown per violation [3]")
    return p.parse_args(argv)


@dataclass
class Tally:
    """What the runs found, by exit status and reason."""

    statuses: Counter = field(default_factory=Counter)
    reasons: Counter = field(default_factory=Counter)
    infeasible: Counter = field(default_factory=Counter)
    opt_statuses: Counter = field(default_factory=Counter)
    failures: Counter = field(default_factory=Counter)
    violations: dict = field(default_factory=lambda: defaultdict(list))
    optimised: int = 0


def _check_one(tally: Tally, i: int, case, path: Path) -> int:
    status, out, err = fuzz.run_in_process(["check", str(path)])
    tally.statuses[status] += 1
    problem = fuzz.contract_violation(status, out, err, fuzz.CHECK_OK)
    if problem:
        tally.violations[f"check: {problem}: {reason_of(err)}"].append((i, case, err))
    elif status == 2:
        tally.reasons[reason_of(err)] += 1
    elif status == 3:
        tally.infeasible[reason_of(err)] += 1
    return status


def _optimize_one(tally: Tally, worker, args, i: int, case, path: Path) -> None:
    tally.optimised += 1
    argv = ["optimize", str(path), "--alternative", fuzz.first_alternative(case),
            "--time-limit", str(args.time_limit)]
    result = worker.run(argv, args.time_limit * 3 + 30)
    if result is None:
        tally.opt_statuses["no answer"] += 1
        tally.violations["optimize: no answer (a hang)"].append((i, case, ""))
        return
    status, out, err = result
    tally.opt_statuses[status] += 1
    problem = fuzz.contract_violation(status, out, err, fuzz.OPTIMIZE_OK)
    if problem:
        tally.violations[f"optimize: {problem}: {reason_of(err)}"].append((i, case, err))
    elif status == 4:
        tally.failures[solver_reason(out)] += 1


def _run(args) -> tuple[Tally, float]:
    chooser = fuzz.RandomChooser(random.Random(args.seed))
    tally = Tally()
    started = time.perf_counter()
    worker = fuzz.CliWorker()
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "case.toml"
        for i in range(args.cases):
            if chooser.rng.random() < args.perturbed:
                case = fuzz.perturb_case(chooser)
            else:
                case = fuzz.make_case(chooser, max_depth=args.max_depth)
            path.write_bytes(case.data)
            status = _check_one(tally, i, case, path)
            if status in (0, 3) and tally.optimised < args.optimize:
                _optimize_one(tally, worker, args, i, case, path)
            if (i + 1) % 1000 == 0:
                print(f"... {i + 1} cases, {time.perf_counter() - started:.0f} s",
                      file=sys.stderr)
    worker.close()
    return tally, time.perf_counter() - started


def _report(args, tally: Tally, seconds: float) -> int:
    print(f"tried {args.cases} cases through check in {seconds:.1f} s (seed {args.seed}, "
          f"max depth {args.max_depth})")
    for status in sorted(tally.statuses):
        print(f"  exit {status}: {tally.statuses[status]}")
    print(f"\nrefused (exit 2) by reason, {sum(tally.reasons.values())} cases:")
    for reason, n in tally.reasons.most_common():
        print(f"  {n:6d}  {reason}")
    if tally.infeasible:
        print(f"\ninfeasible (exit 3) by reason, {sum(tally.infeasible.values())} cases:")
        for reason, n in tally.infeasible.most_common():
            print(f"  {n:6d}  {reason}")
    print(f"\noptimize --alternative <first> on {tally.optimised} valid cases: "
          + ", ".join(f"exit {s}: {n}" for s, n in sorted(tally.opt_statuses.items(), key=str)))
    for reason, n in tally.failures.most_common():
        print(f"  {n:6d}  exit 4: {reason}")
    if not tally.violations:
        print("\ncontract violations: none")
        return 0
    print(f"\ncontract violations: {sum(len(v) for v in tally.violations.values())}")
    for kind, hits in sorted(tally.violations.items(), key=lambda kv: -len(kv[1])):
        print(f"  {len(hits):6d}  {kind}")
        for i, case, err in hits[: args.show]:
            print(f"          case {i}: {case.describe()[:300]}")
            print(f"            stderr: {err.strip()[:300]!r}")
        if args.save:
            args.save.mkdir(parents=True, exist_ok=True)
            for i, case, _ in hits[: args.show]:
                (args.save / f"case_{i}.toml").write_bytes(case.data)
    return 1


def main(argv: list[str] | None = None) -> int:
    args = _arguments(argv)
    tally, seconds = _run(args)
    return _report(args, tally, seconds)


if __name__ == "__main__":
    sys.exit(main())
