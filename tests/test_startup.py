"""Start-up: the per-user cache of property records, the vapour-pressure forms
evaluated without ``chemicals``' module, and what each command imports.

The start-up time itself is measured by ``bench/bench_startup.py``, not here.
"""

from __future__ import annotations

import json
import math
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from purgeplan import properties
from purgeplan.physics.separation import wagner_original_pa, wagner_pa
from purgeplan.properties import lookup, lookup_uncached

ROOT = Path(__file__).resolve().parents[1]
AMMONIA = ROOT / "cases" / "ammonia_demo.toml"
HYDROGENATION = ROOT / "cases" / "hydrogenation_demo.toml"
_SCRIPT = shutil.which("purgeplan", path=str(Path(sys.executable).parent))
COMMAND = [_SCRIPT] if _SCRIPT else [sys.executable, "-m", "purgeplan"]
FUEL = "standard, fuel, none"

#: Identifiers of the two demos' components, and one given by CAS number.
IDENTIFIERS = ("H2", "N2", "NH3", "Ar", "CH4", "benzene", "cyclohexane", "7440-59-7")


def _same(a, b) -> bool:
    """Equal records, NaN equal to NaN (a record is compared number by number)."""
    if isinstance(a, (tuple, list)) and isinstance(b, (tuple, list)):
        return len(a) == len(b) and all(_same(x, y) for x, y in zip(a, b, strict=True))
    if isinstance(a, float) and isinstance(b, float) and math.isnan(a) and math.isnan(b):
        return True
    return type(a) is type(b) and a == b


@pytest.fixture
def cache_home(tmp_path, monkeypatch):
    """An empty per-user cache folder for this test, for this process and its children."""
    home = tmp_path / "cache"
    monkeypatch.setenv("XDG_CACHE_HOME", str(home))
    properties._DiskCache.reset()
    properties._EosCache.reset()
    yield home
    properties._DiskCache.reset()
    properties._EosCache.reset()


def _cache_file(home: Path) -> Path:
    files = list((home / "purgeplan").glob("properties-chemicals-*.json"))
    assert len(files) == 1, files
    return files[0]


def _optimize_json(home: Path, tmp_path: Path, name: str, case: Path = AMMONIA) -> dict:
    out = tmp_path / f"{name}.json"
    env = {**os.environ, "XDG_CACHE_HOME": str(home)}
    proc = subprocess.run([*COMMAND, "optimize", str(case), "--alternative", FUEL, "--quiet",
                           "--json", str(out)], capture_output=True, text=True, env=env,
                          timeout=300)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    assert proc.stderr == ""
    return _without_timings(json.loads(out.read_text(encoding="utf-8")))


def _without_timings(doc):
    if isinstance(doc, dict):
        return {k: _without_timings(v) for k, v in doc.items()
                if not any(w in k for w in ("time_s", "seconds", "elapsed", "date"))}
    if isinstance(doc, list):
        return [_without_timings(v) for v in doc]
    return doc


# ---------------------------------------------------------------------------
# the cache


def test_cached_and_fresh_records_are_identical(cache_home):
    fresh = {i: lookup_uncached(i) for i in IDENTIFIERS}
    first = {i: lookup(i) for i in IDENTIFIERS}        # looked up, and written to the cache
    assert _cache_file(cache_home).is_file()
    properties._DiskCache.reset()                      # as a new process would
    cached = {i: lookup(i) for i in IDENTIFIERS}       # read back from the file
    assert set(properties._DiskCache.instance().records) == set(IDENTIFIERS)
    for i in IDENTIFIERS:
        assert _same(first[i], fresh[i]), i
        assert _same(cached[i], fresh[i]), i
    # the records carry real data, including both vapour-pressure forms
    assert fresh["NH3"][3] == pytest.approx(17.031, abs=1e-3)
    assert {fresh[i][8][0] for i in IDENTIFIERS if fresh[i][8]} == {"wagner", "wagner_original"}


def test_the_cache_is_what_a_later_run_reads(cache_home, tmp_path):
    """A record changed in the file changes the answer: the cached path is really taken."""
    fresh = _optimize_json(cache_home, tmp_path, "fresh")
    path = _cache_file(cache_home)
    doc = json.loads(path.read_text(encoding="utf-8"))
    assert {"H2", "N2", "NH3", "Ar", "CH4"} <= set(doc["records"])
    assert _optimize_json(cache_home, tmp_path, "cached") == fresh
    doc["records"]["NH3"][3] *= 1.5                     # molar mass of the product
    path.write_text(json.dumps(doc), encoding="utf-8")
    assert _optimize_json(cache_home, tmp_path, "edited") != fresh


@pytest.mark.parametrize("damage", [
    "garbage", "truncated", "not_a_record", "wrong_type", "other_format", "other_version",
])
def test_a_corrupt_or_foreign_cache_is_ignored_and_rebuilt(cache_home, tmp_path, damage):
    fresh = _optimize_json(cache_home, tmp_path, "fresh")
    path = _cache_file(cache_home)
    good = path.read_text(encoding="utf-8")
    doc = json.loads(good)
    bad_doc = json.loads(good)
    if damage == "garbage":
        text = "\x00\xff not json"
    elif damage == "truncated":
        text = good[: len(good) // 2]
    else:
        if damage == "not_a_record":
            bad_doc["records"]["N2"] = ["only", "three", 3]
        elif damage == "wrong_type":
            bad_doc["records"]["N2"][3] = "28.0"
        elif damage == "other_format":
            bad_doc["format"] = properties.CACHE_FORMAT + 1
        else:
            bad_doc["chemicals"] = "0.0.1"
        # a foreign file carries numbers that must not be used
        for record in bad_doc["records"].values():
            if len(record) > 3 and isinstance(record[3], float):
                record[3] *= 2.0
        text = json.dumps(bad_doc)
    path.write_text(text, encoding="utf-8", errors="surrogateescape")
    assert _optimize_json(cache_home, tmp_path, "after") == fresh
    assert json.loads(path.read_text(encoding="utf-8")) == doc   # rebuilt
    assert not list(path.parent.glob("*.tmp"))                   # written atomically


def test_an_unwritable_cache_folder_only_costs_the_lookup(tmp_path):
    fresh = _optimize_json(tmp_path / "cache", tmp_path, "fresh")
    blocker = tmp_path / "a_file"
    blocker.write_text("not a folder", encoding="utf-8")
    assert _optimize_json(blocker, tmp_path, "blocked") == fresh


def test_unknown_identifiers_are_not_cached(cache_home):
    with pytest.raises(LookupError):
        lookup("no-such-component-xyz")
    assert not (cache_home / "purgeplan").exists() or not any(
        "no-such-component-xyz" in json.loads(p.read_text(encoding="utf-8"))["records"]
        for p in (cache_home / "purgeplan").glob("*.json"))


# ---------------------------------------------------------------------------
# vapour pressure without chemicals' module


@pytest.mark.parametrize("identifier", ["NH3", "benzene", "cyclohexane", "CH4", "N2", "H2O",
                                        "methanol"])
def test_wagner_forms_match_chemicals_exactly(identifier):
    from chemicals import vapor_pressure as vp

    kind, tc, pc, a, b, c, d = lookup_uncached(identifier)[8]
    ours, theirs = ((wagner_pa, vp.Wagner) if kind == "wagner"
                    else (wagner_original_pa, vp.Wagner_original))
    for t in [0.3 * tc + k * 0.05 * tc for k in range(15)] + [tc, 1.2 * tc]:
        assert ours(t, tc, pc, a, b, c, d) == theirs(t, tc, pc, a, b, c, d), (identifier, t)
    # and it is a vapour pressure: rising with temperature, Pc at the critical point
    assert ours(0.6 * tc, tc, pc, a, b, c, d) < ours(0.8 * tc, tc, pc, a, b, c, d) < pc
    assert ours(tc, tc, pc, a, b, c, d) == pc


def test_both_forms_are_used_by_the_demo_components():
    kinds = {lookup_uncached(i)[8][0] for i in ("NH3", "cyclohexane", "benzene")}
    assert kinds == {"wagner", "wagner_original"}


# ---------------------------------------------------------------------------
# what each command imports


def _modules_after(code: str, home: Path) -> set[str]:
    env = {**os.environ, "XDG_CACHE_HOME": str(home)}
    probe = code + "\nimport sys\nprint(' '.join(sorted(sys.modules)))"
    proc = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True,
                          env=env, timeout=300)
    assert proc.returncode == 0, proc.stderr
    return set(proc.stdout.split())


def test_a_cached_optimize_reads_no_property_tables(tmp_path):
    home = tmp_path / "cache"
    _optimize_json(home, tmp_path, "warm")   # fills the cache
    run = (f"from purgeplan.cli import main\n"
           f"assert main(['optimize', {str(AMMONIA)!r}, '--alternative', {FUEL!r},"
           f" '--quiet']) == 0")
    modules = _modules_after(run, home)
    assert "purgeplan.solve" in modules          # it did optimise
    assert not {"chemicals", "pandas", "thermo"} & modules
    # an empty cache does read them
    assert {"chemicals", "pandas"} <= _modules_after(run, tmp_path / "empty")


def test_reading_a_case_imports_no_scipy(tmp_path):
    modules = _modules_after(f"from purgeplan import load_case\nload_case({str(HYDROGENATION)!r})",
                             tmp_path / "cache")
    assert "purgeplan.case" in modules
    assert not {m for m in modules if m.split(".")[0] in ("scipy", "pyomo", "openpyxl")}


def test_records_written_meanwhile_by_another_process_are_kept(cache_home):
    lookup("H2")                                        # this process writes the file
    path = _cache_file(cache_home)
    doc = json.loads(path.read_text(encoding="utf-8"))
    doc["records"]["N2"] = list(lookup_uncached("N2"))  # another process adds a record
    path.write_text(json.dumps(doc), encoding="utf-8")
    lookup("CH4")                                       # this process adds its next one
    assert set(json.loads(path.read_text(encoding="utf-8"))["records"]) == {"H2", "N2", "CH4"}


# ---------------------------------------------------------------------------
# the cache of Peng-Robinson parameters

#: The ammonia demo's components by CAS number: Ar, CH4, H2, N2, NH3.
AMMONIA_CAS = ("7440-37-1", "74-82-8", "1333-74-0", "7727-37-9", "7664-41-7")


def _eos_file(home: Path) -> Path:
    files = list((home / "purgeplan").glob("peng-robinson-thermo-*.json"))
    assert len(files) == 1, files
    return files[0]


def test_cached_and_fresh_peng_robinson_parameters_are_identical(cache_home):
    fresh = properties.peng_robinson_parameters_uncached(AMMONIA_CAS)
    first = properties.peng_robinson_parameters(AMMONIA_CAS)
    path = _eos_file(cache_home)
    properties._EosCache.reset()                         # as a new process would
    assert properties.peng_robinson_parameters(AMMONIA_CAS) == first == fresh
    assert list(json.loads(path.read_text(encoding="utf-8"))["records"]) == [
        " ".join(AMMONIA_CAS)]
    assert fresh[0][2] == 33.145                         # Tc of H2 in chemicals [K]


@pytest.mark.parametrize("damage", ["garbage", "short_row", "wrong_type", "other_version"])
def test_a_corrupt_peng_robinson_cache_is_ignored_and_rebuilt(cache_home, damage):
    good = properties.peng_robinson_parameters(AMMONIA_CAS)
    path = _eos_file(cache_home)
    doc = json.loads(path.read_text(encoding="utf-8"))
    record = doc["records"][" ".join(AMMONIA_CAS)]
    if damage == "short_row":
        record[0] = record[0][:-1]
    elif damage == "wrong_type":
        record[3][0][1] = "0.0152"
    elif damage == "other_version":
        doc["thermo"] = "0.0.1"
        record[0] = [2.0 * t for t in record[0]]
    text = "not json" if damage == "garbage" else json.dumps(doc)
    path.write_text(text, encoding="utf-8")
    properties._EosCache.reset()
    assert properties.peng_robinson_parameters(AMMONIA_CAS) == good
