"""First use without a guide: the command line as a new user meets it.

Every test runs the installed command (``purgeplan ...``, or ``python -m
purgeplan`` where the script is not installed next to the interpreter) the
way a user does, with the terminal width set through ``COLUMNS``.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
import sys
import textwrap
import tomllib
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest

from purgeplan.case import expand_alternatives, load_case
from purgeplan.cli import EXIT_STATUSES

ROOT = Path(__file__).resolve().parents[1]
AMMONIA = ROOT / "cases" / "ammonia_demo.toml"
HYDROGENATION = ROOT / "cases" / "hydrogenation_demo.toml"
README = (ROOT / "README.md").read_text(encoding="utf-8")

_SCRIPT = shutil.which("purgeplan", path=str(Path(sys.executable).parent))
COMMAND = [_SCRIPT] if _SCRIPT else [sys.executable, "-m", "purgeplan"]

#: One alternative of the ammonia demo, named as `check` names it.
FUEL = {"makeup_grade": "standard", "purge_destination": "fuel", "recovery": "none"}
FLARE = {"makeup_grade": "standard", "purge_destination": "flare", "recovery": "none"}


def run(*args, columns: int = 200, cwd: Path | None = None, timeout: float = 300,
        **popen) -> subprocess.CompletedProcess:
    """``purgeplan ARGS`` in a terminal ``columns`` wide, output captured as text."""
    env = {**os.environ, "COLUMNS": str(columns)}
    return subprocess.run([*COMMAND, *map(str, args)], capture_output=True, text=True,
                          timeout=timeout, cwd=cwd, env=env, **popen)


def one_error_line(proc: subprocess.CompletedProcess) -> str:
    """The single stderr line of a refused run (asserts there is exactly one)."""
    lines = proc.stderr.rstrip("\n").split("\n")
    assert len(lines) == 1, proc.stderr
    assert lines[0].startswith("purgeplan: error: "), lines[0]
    assert "Traceback" not in proc.stdout + proc.stderr
    return lines[0]


def explicit(*alternatives: tuple[str, dict]) -> str:
    """``[[alternatives]]`` tables naming the given choices."""
    out = []
    for name, choices in alternatives:
        inline = ", ".join(f'{k} = "{v}"' for k, v in choices.items())
        out.append(f'\n[[alternatives]]\nname = "{name}"\nchoices = {{ {inline} }}\n')
    return "".join(out)


def edited(path: Path, *edits: tuple[str, str], extra: str = "") -> str:
    text = path.read_text(encoding="utf-8")
    for old, new in edits:
        assert text.count(old) == 1, old
        text = text.replace(old, new)
    return text + extra


def write(folder: Path, name: str, text: str) -> Path:
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


def numbered(case: Path) -> dict[str, int]:
    """Alternative name -> the number `check` gives it (its place in the sorted list)."""
    alts = expand_alternatives(load_case(case)[0])
    return {name: i for i, (name, _, _) in enumerate(alts, 1)}


def name_of(choices: dict) -> str:
    return ", ".join(f"{k}={choices[k]}" for k in sorted(choices))


def squash(text: str) -> str:
    return " ".join(text.split())


#: The hydrogenation demo with a second reaction: cyclohexane contracts to
#: methylcyclopentane at a fixed 2 % per pass, and two of its alternatives.
TWO_REACTIONS = edited(
    HYDROGENATION,
    ("cyclohexane = {}\n", "cyclohexane = {}\nmethylcyclopentane = {}\n"),
    ("[reactor]", '[[reactions]]\nname = "ring contraction"\n'
                  'stoichiometry = { cyclohexane = -1, methylcyclopentane = 1 }\n'
                  'key_reactant = "cyclohexane"\nper_pass = "fixed"\n'
                  'per_pass_conversion = 0.02\n\n[reactor]'),
    ("CH4 = 0.01 }", "CH4 = 0.01, methylcyclopentane = 0.97 }"),
    extra=explicit(("reformer at low pressure", {"hydrogen_grade": "reformer",
                                                 "loop_pressure": "low"}),
                   ("electrolytic at low pressure", {"hydrogen_grade": "electrolytic",
                                                     "loop_pressure": "low"})))


# ---------------------------------------------------------------------------
# 2. no steady state: the same words and status from check and optimize


def test_check_and_optimize_report_no_steady_state_alike(tmp_path):
    """The ammonia demo with its reactor at 743 (kelvin written where degC is meant), at
    150 bar (at 160 bar a steady state remains, with a per-pass conversion of 0.6 %)."""
    case = write(tmp_path, "hot.toml", edited(
        AMMONIA, ("temperature_c = 470", "temperature_c = 743"),
        ("pressure_bar = 160", "pressure_bar = 150"),
        extra=explicit(("standard fuel", FUEL))))
    with ThreadPoolExecutor(2) as pool:
        check, opt = pool.map(lambda argv: run(*argv, case),
                              [("check",), ("optimize", "--json", tmp_path / "o.json")])
    assert check.returncode == opt.returncode == 3, check.stdout + check.stderr + opt.stderr
    assert "Traceback" not in check.stderr + opt.stderr
    assert "case is valid, but 1 of 1 alternatives have no steady state" in check.stdout
    assert "\ncase is valid\n" not in check.stdout

    said_check = squash(check.stdout.split("no steady state: ", 1)[1].split("case is valid")[0])
    said_opt = json.loads((tmp_path / "o.json").read_text())["alternatives"][0]["message"]
    assert squash(said_opt) in squash(opt.stdout)
    cause = ("likely cause: reactor.temperature_c = 743 is hotter than synthesis converters "
             "run")
    assert cause in said_check and cause in said_opt
    # the same words after where each looked: the present purge fraction, or any up to the box
    assert said_check.startswith("at the purge fraction 0.03: ")
    assert re.match(r"at any purge fraction up to [0-9.]+: ", said_opt)
    words = [re.sub(r"[0-9][0-9.e-]*", "N", text.split(": ", 1)[1])
             for text in (said_check, said_opt)]
    assert words[0] == words[1]


# ---------------------------------------------------------------------------
# 3. output paths: checked before the work, named as given, one rule for folders


def _read_only_folder(tmp_path: Path) -> Path | None:
    """A folder this process cannot write in: a read-only one, or one the system protects."""
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    probe = ro / "probe"
    try:
        probe.write_bytes(b"")
    except OSError:
        return ro
    probe.unlink()  # the superuser writes anywhere; look for a folder even it cannot write
    for candidate in (Path("/sys"), Path("/proc")):
        try:
            (candidate / f"purgeplan-probe-{os.getpid()}").write_bytes(b"")
        except OSError:
            return candidate
    return None


@pytest.mark.parametrize("flag", ["-o", "--plots"])
def test_read_only_output_is_refused_before_the_work(tmp_path, flag):
    ro = _read_only_folder(tmp_path)
    if ro is None:
        pytest.skip("no folder here refuses writes")
    given = f"{ro}/out.xlsx" if flag == "-o" else str(ro)
    argv = ["study", "-o", tmp_path / "out.xlsx"] if flag == "--plots" else ["study"]
    proc = run(*argv, flag, given, "--json", tmp_path / "out.json", cwd=tmp_path)
    assert proc.returncode == 2
    line = one_error_line(proc)
    assert f"{flag} {given}:" in line and "cannot write in folder" in line, line
    assert ".part" not in line
    assert proc.stdout == ""  # refused before the study ran
    assert sorted(p.name for p in tmp_path.iterdir()) == ["ro"]


@pytest.mark.parametrize("argv, fragment", [
    (["-o", "nodir/out.xlsx"], "-o nodir/out.xlsx: folder nodir does not exist; create it"),
    (["--json", "nodir/out.json"], "--json nodir/out.json: folder nodir does not exist"),
    (["--plots", "newplots/sub"], "--plots newplots/sub: folder newplots does not exist"),
    (["-o", "out.csv"], "-o out.csv: the workbook is an Excel file; give a file name ending "
                        "in .xlsx"),
    (["-o", "out"], "-o out: the workbook is an Excel file"),
    (["--json", "out.txt"], "--json out.txt: the results are written as JSON"),
    (["--plots", "afile"], "--plots afile: exists and is not a folder"),
    (["-o", "adir"], "-o adir: is a folder"),
])
def test_bad_output_paths_are_refused_and_nothing_is_written(tmp_path, argv, fragment):
    (tmp_path / "afile").write_text("keep")
    (tmp_path / "adir").mkdir()
    before = sorted(p.name for p in tmp_path.iterdir())
    proc = run("study", *argv, cwd=tmp_path)
    assert proc.returncode == 2
    assert fragment in one_error_line(proc)
    assert proc.stdout == ""
    assert sorted(p.name for p in tmp_path.iterdir()) == before


@pytest.mark.parametrize("command", ["optimize", "evaluate"])
def test_json_to_standard_output(tmp_path, command):
    case = write(tmp_path, "case.toml", AMMONIA.read_text() + explicit(("fuel", FUEL)))
    proc = run(command, case, "--json", "-", cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    doc = json.loads(proc.stdout)  # nothing but the JSON on standard output
    assert [a["name"] for a in doc["alternatives"]] == ["fuel"]
    assert "fuel" in proc.stderr and "TAC" in proc.stderr  # the report went to stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["case.toml"]


#: ``purgeplan`` with the PNG writer failing as on a full disk.
FULL_DISK = textwrap.dedent("""
    import sys
    import matplotlib.figure

    def full(self, *args, **kwargs):
        raise OSError(28, "No space left on device")

    matplotlib.figure.Figure.savefig = full
    from purgeplan.cli import main
    sys.exit(main(sys.argv[1:]))
""")


def test_a_failed_write_has_its_own_status_and_names_what_was_written(tmp_path):
    write(tmp_path, "case.toml", AMMONIA.read_text() + explicit(("fuel", FUEL)))
    proc = subprocess.run([sys.executable, "-c", FULL_DISK, "optimize", "case.toml",
                           "--json", "out.json", "--plots", "plots"], cwd=tmp_path,
                          capture_output=True, text=True, timeout=300)
    assert proc.returncode == 5
    line = one_error_line(proc)
    assert line == ("purgeplan: error: cannot write plots/cost_curves.png: No space left on "
                    "device; written: out.json")
    assert json.loads((tmp_path / "out.json").read_text())["alternatives"][0]["name"] == "fuel"
    assert not [p for p in (tmp_path / "plots").iterdir()]
    status = dict(EXIT_STATUSES)[5]
    assert "could not be written" in status and "could not be written" in run("--help").stdout


# ---------------------------------------------------------------------------
# 4. naming an alternative


def test_an_alternative_is_named_by_number_label_or_name_with_any_spacing(tmp_path):
    numbers = numbered(HYDROGENATION)
    name = "hydrogen_grade=reformer, loop_pressure=low"
    number = numbers[name]
    check = run("check", HYDROGENATION)
    assert re.search(rf"^ *{number}  reformer, low$", check.stdout, re.M), check.stdout
    forms = [str(number), "reformer, low", "reformer,low", "  Reformer ,  low ",
             name, "hydrogen_grade=reformer,loop_pressure=low",
             "loop_pressure = low, hydrogen_grade = reformer"]
    with ThreadPoolExecutor(2) as pool:
        procs = list(pool.map(lambda form: run(
            "evaluate", HYDROGENATION, "--alternative", form, "--json", "-"), forms))
    for form, proc in zip(forms, procs, strict=True):
        assert proc.returncode == 0, (form, proc.stderr)
        assert json.loads(proc.stdout)["alternatives"][0]["name"] == name, form


def test_an_unknown_alternative_lists_the_choices_one_per_line():
    proc = run("optimize", HYDROGENATION, "--alternative", "reformer, lwo")
    assert proc.returncode == 2
    line = one_error_line(proc)
    assert "--alternative reformer, lwo: no such alternative" in line
    assert "did you mean 'reformer, low'?" in line
    assert "['" not in proc.stdout + proc.stderr  # no Python list
    numbers = numbered(HYDROGENATION)
    listed = proc.stdout.splitlines()[1:]
    assert len(listed) == len(numbers)
    for (name, number), text in zip(sorted(numbers.items(), key=lambda x: x[1]), listed,
                                    strict=True):
        assert text.split()[0] == str(number) and text.rstrip().endswith(name), text

    wrong = run("evaluate", HYDROGENATION, "--alternative", "9")
    assert wrong.returncode == 2
    assert f"give a number from 1 to {len(numbers)}" in one_error_line(wrong)


# ---------------------------------------------------------------------------
# 5. the result table fits the terminal and shows every reaction


@pytest.mark.parametrize("columns", [80, 120])
def test_the_table_fits_the_terminal_and_shows_each_reaction(tmp_path, columns):
    case = write(tmp_path, "two.toml", TWO_REACTIONS)
    with ThreadPoolExecutor(2) as pool:
        opt, ev = pool.map(lambda argv: run(*argv, columns=columns), [
            ("optimize", case, "--json", tmp_path / "o.json"),
            ("evaluate", case, "--alternative", "1", "--json", tmp_path / "e.json")])
    for proc, target in ((opt, "o.json"), (ev, "e.json")):
        assert proc.returncode == 0, proc.stderr
        assert max(map(len, proc.stdout.splitlines())) <= columns, proc.stdout
        for rec in json.loads((tmp_path / target).read_text())["alternatives"]:
            shown = [f"{r['per_pass_conversion']:.4f}" for r in rec["reactions"]]
            assert shown == ["0.9600", "0.0200"]
            assert all(value in proc.stdout for value in shown)
            assert f"{rec['tac_per_year']:,.0f}" in proc.stdout
        assert "(1) benzene hydrogenation" in squash(proc.stdout)
        assert "(2) ring contraction" in squash(proc.stdout)


def test_study_fits_80_columns_writes_plots_into_a_new_folder_and_logs_no_bars(tmp_path):
    case = write(tmp_path, "two.toml", TWO_REACTIONS)
    proc = run("study", case, "-o", "s.xlsx", "--json", "s.json", "--plots", "plots",
               columns=80, cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert max(map(len, proc.stdout.splitlines())) <= 80, proc.stdout
    assert "\r" not in proc.stderr  # no progress bar in a captured log
    assert proc.stderr.strip().startswith("CAUTION")
    assert sorted(p.name for p in (tmp_path / "plots").iterdir()) == [
        "cost_curves.png", "sensitivity.png"]
    assert (tmp_path / "s.xlsx").stat().st_size > 0
    assert "wrote s.xlsx, s.json, plots/cost_curves.png, plots/sensitivity.png" in proc.stdout
    doc = json.loads((tmp_path / "s.json").read_text())
    for rec in doc["alternatives"]:
        assert f"{rec['tac_per_year']:,.0f}" in proc.stdout


def test_progress_bars_show_on_a_terminal_only(tmp_path):
    import fcntl
    import pty
    import struct
    import termios

    case = write(tmp_path, "two.toml", TWO_REACTIONS)
    leader, follower = pty.openpty()
    fcntl.ioctl(follower, termios.TIOCSWINSZ, struct.pack("HHHH", 24, 120, 0, 0))
    try:
        proc = subprocess.run([*COMMAND, "optimize", str(case)], stdout=subprocess.PIPE,
                              stderr=follower, timeout=300, text=True,
                              env={**os.environ, "COLUMNS": "120"})
        os.close(follower)
        seen = b""
        while True:
            try:
                chunk = os.read(leader, 65536)
            except OSError:
                break
            if not chunk:
                break
            seen += chunk
    finally:
        os.close(leader)
    assert proc.returncode == 0
    assert b"optimizing alternatives" in seen and b"\r" in seen
    assert "\r" not in proc.stdout
    quiet = run("optimize", case, "--quiet")
    assert quiet.returncode == 0 and quiet.stderr == ""


# ---------------------------------------------------------------------------
# 6. plain words with units on the terminal; the JSON keeps its keys


def test_limits_and_cost_lines_in_plain_words(tmp_path):
    case = write(tmp_path, "case.toml", AMMONIA.read_text() + explicit(("flare", FLARE)))
    with ThreadPoolExecutor(2) as pool:
        opt, ev = pool.map(run, ["optimize", "evaluate"],
                           [case, case], ["--json", "--json"],
                           [tmp_path / "o.json", tmp_path / "e.json"])
    assert opt.returncode == 0 and ev.returncode == 0, opt.stderr + ev.stderr
    rec = json.loads((tmp_path / "o.json").read_text())["alternatives"][0]
    assert rec["binding_constraints"] == ["max_inert_fraction_reactor_inlet"]
    assert "inert limit at the reactor inlet" in opt.stdout
    assert "max_inert_fraction_reactor_inlet" not in opt.stdout

    rec = json.loads((tmp_path / "e.json").read_text())["alternatives"][0]
    assert rec["purge_fraction"] == tomllib.loads(AMMONIA.read_text())["loop"]["purge_fraction"]
    for key in rec["costs"]:
        assert key not in ev.stdout, key
    assert "Feed: standard" in ev.stdout and "Recycle compression power" in ev.stdout
    total = re.search(r"^  Total annualised cost +([-0-9,]+)$", ev.stdout, re.M)
    assert total and total.group(1) == f"{rec['tac_per_year']:,.0f}"
    assert "cost lines [EUR/year]" in ev.stdout


def test_check_gives_production_as_the_case_does_and_one_unit_of_money():
    check = run("check", AMMONIA)
    assert check.returncode == 0, check.stderr
    t_d = tomllib.loads(AMMONIA.read_text())["loop"]["production_t_d"]
    assert f"production {t_d:,} t/d of NH3" in check.stdout
    assert "EUR/year" in check.stdout and "/yr" not in check.stdout


# ---------------------------------------------------------------------------
# 7. evaluate reports the state, its costs and the limit it breaks


def test_evaluate_off_limit_reports_state_costs_and_the_limit(tmp_path):
    case = write(tmp_path, "case.toml", AMMONIA.read_text() + explicit(("fuel", FUEL)))
    proc = run("evaluate", case, "--purge-fraction", "0.001", "--json", tmp_path / "e.json")
    assert proc.returncode == 3
    rec = json.loads((tmp_path / "e.json").read_text())["alternatives"][0]
    assert rec["feasible"] is False and rec["inert_fraction_reactor_inlet"] > 0.25
    out = squash(proc.stdout)
    assert f"{100 * rec['inert_fraction_reactor_inlet']:.2f}" in out
    assert "INFEASIBLE: the inert limit at the reactor inlet (0.25) against" in out
    assert "not met: the inert limit at the reactor inlet" in out
    assert f"Total annualised cost {rec['tac_per_year']:,.0f}" in out


# ---------------------------------------------------------------------------
# 8. one command line: help, spelling, options, statuses


SUBCOMMANDS = ("demos", "new", "check", "evaluate", "optimize", "study", "scenarios")


@pytest.fixture(scope="module")
def helps():
    with ThreadPoolExecutor(2) as pool:
        procs = list(pool.map(lambda argv: run(*argv, columns=100),
                              [("--help",), *[(c, "--help") for c in SUBCOMMANDS]]))
    assert all(p.returncode == 0 for p in procs)
    return dict(zip(("", *SUBCOMMANDS), (p.stdout for p in procs), strict=True))


def test_help_is_consistent(helps):
    for command, text in helps.items():
        assert "optimis" not in text.lower(), command
    for command in ("check", "evaluate", "optimize"):
        assert re.search(r"^  CASE +case file \(TOML\)$", helps[command], re.M), command
    for command in ("optimize", "study"):
        for option in ("--quiet", "--plots DIR", "--json FILE.json", "--time-limit S"):
            assert option in helps[command], (command, option)
    assert "--purge-fraction A" in helps["evaluate"]
    assert "default: the case's present value" in squash(helps["evaluate"])
    top = squash(helps[""])
    for code, meaning in EXIT_STATUSES:
        assert f"{code} {squash(meaning)}" in top, code


def test_no_command_prints_help_and_exits_2():
    proc = run()
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert "usage: purgeplan" in proc.stderr
    assert proc.stderr.rstrip().splitlines()[-1] == (
        "purgeplan: error: name a command; they are listed above")


def _readme_section(title: str) -> str:
    return README.split(f"\n## {title}\n", 1)[1].split("\n## ", 1)[0]


def _options(help_text: str) -> set[str]:
    """The options a command's help lists (the first spelling of each), less --help."""
    section = help_text.split("\noptions:\n", 1)[1]
    found = {line.split()[0].rstrip(",") for line in section.splitlines()
             if line.startswith("  -")}
    return found - {"-h"}


def test_readme_commands_and_exit_statuses_match_the_help(helps):
    section = _readme_section("Commands")
    rows = [line for line in section.splitlines() if line.startswith("| `purgeplan ")]
    assert [r.split("`")[1].split()[1] for r in rows] == list(SUBCOMMANDS)
    for row in rows:
        command = row.split("`")[1].split()[1]
        listed = set(re.findall(r"(?<![\w-])(--?[a-z][a-z-]*)", row.split("`")[1]))
        assert listed == _options(helps[command]), command
        assert command in helps[""]
    statuses = re.findall(r"^\| `(\d+)` \| (.+) \|$", section, re.M)
    assert [(int(c), squash(m)) for c, m in statuses] == [
        (c, squash(m)) for c, m in EXIT_STATUSES]


@pytest.fixture(scope="module")
def reports():
    """What `check`, `evaluate` and `optimize` print for the hydrogenation demo, and
    `evaluate` for an ammonia alternative with a warning (its H2/N2 ratio is not held)."""
    with ThreadPoolExecutor(2) as pool:
        procs = list(pool.map(lambda argv: run(*argv), [
            ("check", HYDROGENATION), ("evaluate", HYDROGENATION, "--alternative", "1"),
            ("optimize", HYDROGENATION, "--alternative", "1"),
            ("evaluate", AMMONIA, "--alternative", "standard, fuel, membrane")]))
    # the ammonia case's present purge fraction may break its inert limit (exit 3)
    assert [p.returncode for p in procs[:3]] == [0, 0, 0], [p.stderr for p in procs]
    assert procs[3].returncode in (0, 3), procs[3].stderr
    return squash(" ".join(p.stdout for p in procs))


def test_readme_glossary_gives_the_words_the_tool_prints(helps, reports):
    rows = re.findall(r"^\| ([^|`]+?) \| `([^`]+)`", _readme_section("Glossary"), re.M)
    assert len(rows) >= 10
    words = squash(" ".join(helps.values())) + " " + reports
    missing = [term for term, _ in rows if term not in words]
    assert not missing, missing
    keys = json.dumps(json.loads(run("evaluate", HYDROGENATION, "--alternative", "1",
                                     "--json", "-").stdout))
    # break_even and the decision belong to a study's document (tests/test_cli.py reads
    # them there)
    absent = [key for _, key in rows if f'"{key}"' not in keys and key != "break_even"
              and not key.startswith("decision.")]
    assert not absent, absent


# ---------------------------------------------------------------------------
# 9. the demos: listed, invented, copied out to edit


def test_demos_are_listed_as_invented_and_copied_out(tmp_path):
    listing = run("demos")
    assert listing.returncode == 0
    assert "invented" in listing.stdout
    for name in ("ammonia", "hydrogenation"):
        assert re.search(rf"^  {name} ", listing.stdout, re.M), listing.stdout
    made = run("new", "h.toml", "--from", "hydrogenation", cwd=tmp_path)
    assert made.returncode == 0, made.stderr
    assert (tmp_path / "h.toml").read_bytes() == HYDROGENATION.read_bytes()
    assert "purgeplan check h.toml" in made.stdout
    again = run("new", "h.toml", "--from", "ammonia", cwd=tmp_path)
    assert again.returncode == 2 and "h.toml: exists" in one_error_line(again)
    unknown = run("new", "x.toml", "--from", "methanol", cwd=tmp_path)
    assert unknown.returncode == 2
    assert "--from methanol: no such demo case; the demos are ammonia, hydrogenation" in \
        one_error_line(unknown)
    wrong = run("new", "x.txt", cwd=tmp_path)
    assert wrong.returncode == 2 and "ending in .toml" in one_error_line(wrong)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["h.toml"]


# ---------------------------------------------------------------------------
# 10. set-up facts in the README


def test_readme_gives_the_set_up():
    setup = _readme_section("Set-up")
    for fact in ("Python 3.11 or newer", "python3 -m venv", "minutes", "terminal"):
        assert fact in setup, fact


# ---------------------------------------------------------------------------
# 11. start-up: a command imports only what it needs


def test_optimize_of_one_alternative_imports_no_output_or_progress_libraries(tmp_path):
    case = write(tmp_path, "case.toml", AMMONIA.read_text() + explicit(("fuel", FUEL)))
    proc = subprocess.run([sys.executable, "-X", "importtime", "-m", "purgeplan", "optimize",
                           str(case)], capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0
    imported = {line.split("|")[-1].strip().split(".")[0]
                for line in proc.stderr.splitlines() if line.startswith("import time:")}
    assert "purgeplan" in imported
    assert not imported & {"tqdm", "openpyxl", "matplotlib", "pyomo"}, imported
