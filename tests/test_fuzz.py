"""Fuzz the case reader: mutated demo cases must be accepted or refused in one line.

Every generated case file goes through ``purgeplan check`` (in-process for
speed, a few through a real subprocess) and a sample through ``optimize``.
The contract: exit status 0 (valid), 2 (bad input) or 3 (valid, infeasible),
for ``optimize`` also 4 (solver failure or time limit); exactly one line on
stderr for bad input and at most one for any other non-zero status; never a
traceback.  Exit status 1 (internal error) is always a defect.

The mutation generator (:func:`make_case`) is driven by a small chooser
interface so that Hypothesis (:class:`HypothesisChooser`, with shrinking) and
a plain seeded ``random.Random`` (:class:`RandomChooser`, used by
``bench/fuzz_long.py``) generate from the same code.
"""

from __future__ import annotations

import contextlib
import copy
import datetime as dt
import io
import json
import math
import multiprocessing
import random
import signal
import string
import subprocess
import sys
import tempfile
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, Phase, event, given, settings
from hypothesis import strategies as st

ROOT = Path(__file__).resolve().parents[1]
SEEDS = {
    "ammonia": ROOT / "cases" / "ammonia_demo.toml",
    "hydrogenation": ROOT / "cases" / "hydrogenation_demo.toml",
    "template": ROOT / "templates" / "case_template.toml",
}
SEED_TEXT = {name: path.read_text(encoding="utf-8") for name, path in SEEDS.items()}


def _template_example(name: str) -> str:
    """The template with its example block NAME uncommented in place (one line "# example:
    NAME", then commented TOML up to a blank line), so the fuzz reaches that block's keys."""
    lines = SEED_TEXT["template"].splitlines(keepends=True)
    start = lines.index(f"# example: {name}\n") + 1
    end = start
    while end < len(lines) and lines[end].strip():
        lines[end] = lines[end][2:]
        end += 1
    return "".join(lines)


#: The template's Langmuir-Hinshelwood converter as a seed of its own: every key of a rate
#: whose constants the case gives (the power law's are a subset).
SEEDS["rate_forms"] = SEEDS["template"]
SEED_TEXT["rate_forms"] = _template_example("rate_langmuir_hinshelwood")
#: The template's quench converter as a seed of its own, so that the mutations reach the
#: keys of quench between adiabatic beds.
SEEDS["quench"] = SEEDS["template"]
SEED_TEXT["quench"] = _template_example("quench_converter")
SEED_DOCS = {name: tomllib.loads(text) for name, text in SEED_TEXT.items()}

CHECK_OK = frozenset({0, 2, 3, 4})
OPTIMIZE_OK = frozenset({0, 2, 3, 4})

#: deepest nesting the byte mutations append: far past the case's own limit (24 levels)
#: and past the recursion limit of the TOML reader (a few hundred levels of arrays)
MAX_DEPTH = 3_000
#: deepest value the dict mutations build; the helpers here (deepcopy, nodes, the writer)
#: recurse once or twice per level, and later mutations may stack such values
DOC_DEPTH = 60

# ---------------------------------------------------------------------------
# a tiny TOML writer (enough for everything tomllib returns, plus nan and inf)

_BARE = set(string.ascii_letters + string.digits + "_-")


def _toml_key(key: str) -> str:
    key = str(key)
    if key and set(key) <= _BARE:
        return key
    return _toml_string(key)


def _toml_string(text: str) -> str:
    out = ['"']
    for ch in text:
        if ch == '"':
            out.append('\\"')
        elif ch == "\\":
            out.append("\\\\")
        elif ch == "\n":
            out.append("\\n")
        elif ch == "\t":
            out.append("\\t")
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    out.append('"')
    return "".join(out)


def _toml_float(x: float) -> str:
    if math.isnan(x):
        return "nan"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    text = repr(x)
    return text if any(c in text for c in ".eE") else text + ".0"


def toml_value(value: Any) -> str:
    """One value in inline form."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return _toml_float(value)
    if isinstance(value, str):
        return _toml_string(value)
    if isinstance(value, dt.datetime | dt.date | dt.time):
        return value.isoformat()
    if isinstance(value, list):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        if not value:
            return "{}"
        return "{ " + ", ".join(f"{_toml_key(k)} = {toml_value(v)}"
                                for k, v in value.items()) + " }"
    raise TypeError(f"cannot write {type(value).__name__} as TOML")


def _is_table_array(value: Any) -> bool:
    return isinstance(value, list) and bool(value) and all(isinstance(v, dict) for v in value)


def toml_dumps(doc: dict) -> str:
    """TOML text for a dict: nested dicts as [tables], lists of dicts as [[arrays]].

    Tables are written with headers (so deep nesting of tables does not
    become deep inline nesting); values inside arrays of tables are inline.
    """
    lines: list[str] = []

    def table(node: dict, path: tuple) -> None:
        plain = [(k, v) for k, v in node.items()
                 if not isinstance(v, dict) and not _is_table_array(v)]
        subtables = [(k, v) for k, v in node.items() if isinstance(v, dict)]
        arrays = [(k, v) for k, v in node.items() if _is_table_array(v)]
        if path and (plain or not subtables):
            lines.append("[" + ".".join(_toml_key(p) for p in path) + "]")
        for k, v in plain:
            lines.append(f"{_toml_key(k)} = {toml_value(v)}")
        for k, v in subtables:
            table(v, path + (k,))
        for k, v in arrays:
            for item in v:
                lines.append("[[" + ".".join(_toml_key(p) for p in path + (k,)) + "]]")
                for kk, vv in item.items():
                    lines.append(f"{_toml_key(kk)} = {toml_value(vv)}")
    table(doc, ())
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------------------
# choosers: one interface, two sources of randomness


class RandomChooser:
    """Choices from a seeded ``random.Random`` (for long runs outside pytest)."""

    def __init__(self, rng: random.Random):
        self.rng = rng

    def integer(self, lo: int, hi: int) -> int:
        return self.rng.randint(lo, hi)

    def choice(self, seq):
        return seq[self.rng.randrange(len(seq))]

    def boolean(self) -> bool:
        return self.rng.random() < 0.5

    def floating(self) -> float:
        kind = self.rng.randrange(4)
        if kind == 0:
            return self.rng.uniform(-2.0, 2.0)
        if kind == 1:
            return math.copysign(10.0 ** self.rng.uniform(-320, 308), self.rng.uniform(-1, 1))
        if kind == 2:
            return self.rng.choice([math.nan, math.inf, -math.inf, 0.0, -0.0, 5e-324])
        return self.rng.uniform(0.0, 1.0)

    def text(self, max_size: int = 12) -> str:
        alphabet = string.ascii_letters + string.digits + "_- .\"'\\=[]{}#\u00e9\u4e2d\U0001f600"
        return "".join(self.rng.choice(alphabet) for _ in range(self.rng.randint(0, max_size)))


class HypothesisChooser:
    """Choices drawn from Hypothesis (shrinkable)."""

    def __init__(self, data):
        self.data = data

    def integer(self, lo: int, hi: int) -> int:
        return self.data.draw(st.integers(lo, hi))

    def choice(self, seq):
        return self.data.draw(st.sampled_from(list(seq)))

    def boolean(self) -> bool:
        return self.data.draw(st.booleans())

    def floating(self) -> float:
        return self.data.draw(st.floats(allow_nan=True, allow_infinity=True))

    def text(self, max_size: int = 12) -> str:
        return self.data.draw(st.text(max_size=max_size))


# ---------------------------------------------------------------------------
# mutations of the parsed case

SPECIAL_NUMBERS = [0, 0.0, -0.0, 1, -1, -5, 0.5, 1.5, -0.1, 1.0000001, 1e-6, 1e-300, 5e-324,
                   1e300, 1.7976931348623157e308, -1e300, 10**18, -(10**18), 2**63 - 1,
                   math.nan, math.inf, -math.inf]
WRONG_TYPES = ["", "abc", "150 bar", "condensation", "none", True, False, [], [1, 2], ["x"],
               {}, {"x": 1}, dt.date(1979, 5, 27), dt.datetime(1979, 5, 27, 7, 32),
               dt.time(7, 32), 3, 2.5, [[1]], [{}]]
UNIT_SUFFIXES = ["_bar", "_c", "_t_d", "_kmol_h", "_kw", "_m3", "_per_kmol", "_per_kwh",
                 "_per_gj", "_per_t", "_per_m3", "_per_h", "_kg_kmol", "_kj_mol",
                 "_j_mol_k", "_years", "_fraction", "_kmol_m3_h"]
WRONG_UNITS = ["_psi", "_pa", "_kpa", "_barg", "_k", "_f", "_kg_h", "_t_h", "_kmol_s",
               "_mol_h", "_mw", "_hp", "_l", "_ft3", "_per_kg", "_per_mwh", "_per_s",
               "_g_mol", "_btu", "_months", "_percent", ""]
MANY_KEYS = ["pressure_bar", "temperature_c", "production_t_d", "purge_fraction", "name",
             "composition", "stoichiometry", "key_reactant", "per_pass", "identifier", "H2",
             "options", "choices", "value", "makeup_sources", "liquid_fraction", "model",
             "henry_constant_bar", "law",
             "orders", "adsorption", "exponents", "denominator_power",
             "pre_exponential_kmol_m3_h", "activation_energy_kj_mol",
             "heat_of_adsorption_kj_mol"]


def nodes(doc: Any, path: tuple = ()) -> list[tuple[tuple, Any]]:
    """Every (path, value) below ``doc`` (not ``doc`` itself), depth first."""
    out = []
    if isinstance(doc, dict):
        items = list(doc.items())
    elif isinstance(doc, list):
        items = list(enumerate(doc))
    else:
        return out
    for k, v in items:
        out.append((path + (k,), v))
        out.extend(nodes(v, path + (k,)))
    return out


def get_at(doc: Any, path: tuple) -> Any:
    for p in path:
        doc = doc[p]
    return doc


def _rename(ch, key: str) -> str:
    """A plausible wrong spelling of ``key``: wrong or missing unit, typo or noise."""
    how = ch.integer(0, 5)
    for suffix in sorted(UNIT_SUFFIXES, key=len, reverse=True):
        if how <= 1 and key.endswith(suffix):
            stem = key[: -len(suffix)]
            return stem + (ch.choice(WRONG_UNITS) if how == 0 else "")
    if how == 2:
        return key + "s"
    if how == 3 and len(key) > 1:
        i = ch.integer(0, len(key) - 2)
        return key[:i] + key[i + 1] + key[i] + key[i + 2:]
    if how == 4:
        return key.upper() if key != key.upper() else key.lower() + "_x"
    return key + "_" + ch.text(6)


def _deep(ch, depth: int, kind: str) -> Any:
    value: Any = ch.choice([1, "x", 0.5, True])
    for i in range(depth):
        value = [value] if kind == "list" else {f"k{i % 7}": value}
    return value


def _dicts(doc: dict) -> list[tuple[tuple, dict]]:
    return [((), doc)] + [(p, v) for p, v in nodes(doc) if isinstance(v, dict)]


def mutate_doc(ch, doc: dict, log: list[str], max_depth: int = DOC_DEPTH) -> dict:
    """Apply one mutation to ``doc`` in place (it is a private copy) and log it."""
    op = ch.choice(["delete", "rename", "copy_key", "number", "number", "scale", "wrong_type",
                    "empty", "list", "add_key", "deep", "swap", "options"])
    all_nodes = nodes(doc)
    if not all_nodes:
        op = "add_key"
    if op in ("delete", "rename", "copy_key"):
        parent_path, parent = ch.choice([d for d in _dicts(doc) if d[1]] or [((), doc)])
        if parent:
            _mutate_key(ch, op, parent_path, parent, log)
            return doc
        op = "add_key"
    if op in ("number", "scale", "wrong_type", "empty", "list", "swap"):
        _mutate_value(ch, op, doc, all_nodes, log)
    elif op == "add_key":
        parent_path, parent = ch.choice(_dicts(doc))
        key = ch.choice(MANY_KEYS) if ch.boolean() else ch.text(8)
        parent[key] = copy.deepcopy(ch.choice(WRONG_TYPES + SPECIAL_NUMBERS))
        log.append(f"add {'.'.join(map(str, parent_path + (key,)))!s} = {_brief(parent[key])}")
    elif op == "deep":
        parent_path, parent = ch.choice(_dicts(doc))
        depth = ch.integer(1, min(max_depth, DOC_DEPTH))
        kind = ch.choice(["dict", "list"])
        parent["nest"] = _deep(ch, depth, kind)
        log.append(f"deep {kind} of depth {depth} at {'.'.join(map(str, parent_path)) or '/'}")
    else:
        _patch_through_option(ch, doc, log)
    return doc


def _mutate_key(ch, op: str, parent_path: tuple, parent: dict, log: list[str]) -> None:
    """Delete, rename or copy one key of a table."""
    key = ch.choice(list(parent))
    where = ".".join(map(str, parent_path + (key,)))
    if op == "delete":
        del parent[key]
        log.append(f"delete {where}")
        return
    new = _rename(ch, str(key))
    if op == "rename":
        parent[new] = parent.pop(key)
    else:
        parent[new] = copy.deepcopy(parent[key])
    log.append(f"{op} {where} -> {new!r}")


def _new_value(ch, op: str, value: Any, all_nodes: list) -> Any:
    """A replacement for one value: a number, a scaled, emptied, shortened or foreign value."""
    if op == "number":
        return ch.choice(SPECIAL_NUMBERS) if ch.boolean() else ch.floating()
    if op == "scale" and isinstance(value, int | float) and not isinstance(value, bool):
        return value * ch.choice([-1, 0, 1e-9, 1e-3, 0.1, 0.5, 0.999999, 1.000001, 2, 10,
                                  1e3, 1e9, 1e300])
    if op == "empty":
        return type(value)() if isinstance(value, dict | list | str) else ""
    if op == "list" and isinstance(value, list) and value:
        new = list(value)
        if ch.boolean():
            new.append(copy.deepcopy(ch.choice(value)))
        else:
            new.pop(ch.integer(0, len(new) - 1))
        return new
    if op == "swap":
        return copy.deepcopy(ch.choice(all_nodes)[1])
    return copy.deepcopy(ch.choice(WRONG_TYPES))


def _mutate_value(ch, op: str, doc: dict, all_nodes: list, log: list[str]) -> None:
    path, value = ch.choice(all_nodes)
    parent = get_at(doc, path[:-1])
    new = _new_value(ch, op, value, all_nodes)
    try:
        parent[path[-1]] = new
    except (IndexError, TypeError):
        return
    log.append(f"{op} {'.'.join(map(str, path))} = {_brief(new)}")


def _patch_through_option(ch, doc: dict, log: list[str]) -> None:
    """Patch a base-case section through a structural option."""
    targets = [(p, v) for p, v in nodes(doc) if len(p) <= 3 and p[0] != "options"
               and not any(isinstance(k, int) for k in p)]
    target_path, target = ch.choice(targets or [(("loop",), {})])
    patch: Any = copy.deepcopy(target)
    if isinstance(patch, int | float) and not isinstance(patch, bool):
        patch = ch.choice(SPECIAL_NUMBERS)
    for key in reversed(target_path):
        patch = {key: patch}
    doc.setdefault("options", {})
    if not isinstance(doc["options"], dict):
        doc["options"] = {}
    doc["options"]["fuzz"] = {"a": patch, "b": {}}
    log.append(f"option fuzz.a patches {'.'.join(map(str, target_path))}")


def _brief(value: Any) -> str:
    text = repr(value)
    return text if len(text) <= 40 else text[:37] + "..."


# ---------------------------------------------------------------------------
# mutations of the bytes


def deep_text(kind: str, depth: int) -> bytes:
    """TOML text nesting ``depth`` levels deep: arrays, inline tables or table headers."""
    keys = ".".join(f"k{i}" for i in range(depth))
    text = {"array": "\n[deep_fuzz]\nx = " + "[" * depth + "1" + "]" * depth + "\n",
            "inline": "\n[deep_fuzz]\nx = " + "{a = " * depth + "1" + "}" * depth + "\n",
            "table": f"\n[{keys}]\nx = 1\n",
            "option": f"\n[options.deep_fuzz.one.{keys}]\nx = 1\n"}[kind]
    return text.encode()


def mutate_bytes(ch, data: bytes, log: list[str], max_depth: int = MAX_DEPTH) -> bytes:
    """Apply one byte-level mutation and log it."""
    op = ch.choice(["non_utf8", "truncate", "dup_line", "junk", "cut", "bom", "nul", "crlf",
                    "empty", "huge", "big_valid", "deep"])
    n = len(data)
    if op == "deep":
        kind = ch.choice(["array", "inline", "table", "option"])
        depth = ch.integer(1, max_depth)
        log.append(f"appended {kind} nesting of depth {depth}")
        return data + deep_text(kind, depth)
    if op == "non_utf8":
        at = ch.integer(0, n)
        bad = ch.choice([b"\xff", b"\xfe\xff", b"\xc3\x28", b"\x80", b"\xed\xa0\x80", b"\xf8"])
        log.append(f"bytes {bad!r} at {at}")
        return data[:at] + bad + data[at:]
    if op == "truncate":
        at = ch.integer(0, n)
        log.append(f"truncate at {at}")
        return data[:at]
    if op == "dup_line":
        lines = data.split(b"\n")
        candidates = [i for i, ln in enumerate(lines) if b"=" in ln or ln.startswith(b"[")]
        if not candidates:
            return data
        i = ch.choice(candidates)
        log.append(f"duplicate line {i + 1}: {lines[i][:40]!r}")
        return b"\n".join(lines[: i + 1] + [lines[i]] + lines[i + 1:])
    if op == "junk":
        at = ch.integer(0, n)
        junk = ch.choice([b"=", b"[", b"]", b"[[", b'"', b"'''", b"\n=", b"{", b"}", b",",
                          b"\n[loop]\n", b"\nx = \n", b"#", b"\\"])
        log.append(f"junk {junk!r} at {at}")
        return data[:at] + junk + data[at:]
    if op == "cut":
        at = ch.integer(0, n)
        length = ch.integer(1, 200)
        log.append(f"cut {length} bytes at {at}")
        return data[:at] + data[at + length:]
    if op == "bom":
        log.append("UTF-8 byte order mark")
        return b"\xef\xbb\xbf" + data
    if op == "nul":
        at = ch.integer(0, n)
        log.append(f"NUL byte at {at}")
        return data[:at] + b"\x00" + data[at:]
    if op == "crlf":
        log.append("CRLF line ends")
        return data.replace(b"\n", b"\r\n")
    if op == "empty":
        log.append("empty file")
        return b""
    if op == "huge":
        megabytes = ch.integer(3, 6)
        log.append(f"padded to {megabytes} MB")
        pad = (b"# padding " + b"x" * 69 + b"\n") * (megabytes * 13_108)
        return data + b"\n" + pad
    log.append("padded with comments to 1.5 MB (under the size limit)")
    return data + b"\n" + (b"#" + b" " * 78 + b"\n") * 19_660


@dataclass
class GeneratedCase:
    seed: str
    data: bytes
    log: list[str] = field(default_factory=list)

    def describe(self) -> str:
        return f"{self.seed}: " + ("; ".join(self.log) or "unchanged")


def make_case(ch, max_mutations: int = 4, max_depth: int = MAX_DEPTH,
              seed: str | None = None) -> GeneratedCase:
    """A mutated demo case: 0..max_mutations dict mutations, then maybe one byte mutation.

    ``max_depth`` bounds the nesting a byte mutation appends; dict mutations stop at
    ``min(max_depth, DOC_DEPTH)``.  ``seed`` picks the demo case (default: any).
    """
    seed = seed or ch.choice(sorted(SEEDS))
    log: list[str] = []
    count = ch.integer(0, max_mutations)
    if count == 0:
        data = SEED_TEXT[seed].encode("utf-8")
    else:
        doc = copy.deepcopy(SEED_DOCS[seed])
        for _ in range(count):
            mutate_doc(ch, doc, log, max_depth=max_depth)
        data = toml_dumps(doc).encode("utf-8")
    if count == 0 or ch.integer(0, 3) == 0:
        data = mutate_bytes(ch, data, log, max_depth=max_depth)
    return GeneratedCase(seed, data, log)


PERTURB_FACTORS = [0.01, 0.1, 0.5, 0.9, 0.99, 1.01, 1.1, 2.0, 10.0, 100.0]


def perturb_case(ch, max_changes: int = 3, seed: str | None = None) -> GeneratedCase:
    """A demo case with a few numbers scaled: mostly still valid, so the solver runs."""
    seed = seed or ch.choice(sorted(SEEDS))
    doc = copy.deepcopy(SEED_DOCS[seed])
    numbers = [(p, v) for p, v in nodes(doc)
               if isinstance(v, int | float) and not isinstance(v, bool)]
    log: list[str] = []
    for _ in range(ch.integer(1, max_changes)):
        path, _ = ch.choice(numbers)
        parent = get_at(doc, path[:-1])
        factor = ch.choice(PERTURB_FACTORS)
        parent[path[-1]] = parent[path[-1]] * factor
        log.append(f"{'.'.join(map(str, path))} x {factor:g} = {parent[path[-1]]:g}")
    return GeneratedCase(seed, toml_dumps(doc).encode("utf-8"), log)


# ---------------------------------------------------------------------------
# running the CLI


def run_in_process(argv: list[str]) -> tuple[int, str, str]:
    """``purgeplan.cli.main(argv)`` with stdout and stderr captured."""
    from purgeplan.cli import main

    out, err = io.StringIO(), io.StringIO()
    sigterm = signal.getsignal(signal.SIGTERM)
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                status = main(argv)
            except SystemExit as exc:  # argparse; counts as a failure unless 0 or 2
                status = exc.code if isinstance(exc.code, int) else 1
    finally:
        signal.signal(signal.SIGTERM, sigterm)  # main() installs its own handler
    return status, out.getvalue(), err.getvalue()


def run_subprocess(argv: list[str], timeout: float = 120) -> tuple[int, str, str]:
    proc = subprocess.run([sys.executable, "-m", "purgeplan", *argv], capture_output=True,
                          text=True, timeout=timeout, errors="replace")
    return proc.returncode, proc.stdout, proc.stderr


def _worker_loop(conn) -> None:
    """Body of a :class:`CliWorker` process: run each argv received, send the result back."""
    try:
        while True:
            try:
                argv = conn.recv()
            except (EOFError, OSError):
                return
            if argv is None:
                return
            conn.send(run_in_process(argv))
    except KeyboardInterrupt:  # terminated while idle (cli.main maps SIGTERM to it)
        return


class CliWorker:
    """``purgeplan.cli.main`` in a reusable child process that is killed on a time-out.

    The optimiser runs native solver code that a signal cannot interrupt, so
    a hang inside it would stop the whole test session; in a child process it
    becomes a reported failure instead.
    """

    def __init__(self):
        self._context = multiprocessing.get_context("spawn")
        self._process = None
        self._conn = None

    def _start(self) -> None:
        parent, child = self._context.Pipe()
        self._process = self._context.Process(target=_worker_loop, args=(child,), daemon=True)
        self._process.start()
        child.close()
        self._conn = parent

    def run(self, argv: list[str], timeout: float) -> tuple[int, str, str] | None:
        """(status, stdout, stderr), or None when no answer came within ``timeout`` s."""
        if self._process is None or not self._process.is_alive():
            self._start()
        self._conn.send(argv)
        try:
            if self._conn.poll(timeout):
                return self._conn.recv()
        except EOFError:
            self.close(wait=False)
            return -1, "", "the worker process died"
        self.close(wait=False)
        return None

    def close(self, wait: bool = True) -> None:
        """Stop the worker: ask it to finish, and kill it if it does not (or at once)."""
        if self._process is None:
            return
        if wait:
            with contextlib.suppress(OSError):
                self._conn.send(None)
            self._process.join(10)
        if self._process.is_alive():
            self._process.kill()
            self._process.join()
        self._conn.close()
        self._process = self._conn = None


def err_lines(err: str) -> list[str]:
    """Lines as a terminal or a log shows them: split at newlines only."""
    return err.rstrip("\n").split("\n") if err else []


def contract_violation(status: int, out: str, err: str, allowed: frozenset) -> str | None:
    """Why a run breaks the CLI contract, or None when it keeps it.

    The contract: an allowed exit status; no traceback; exactly one stderr
    line for bad input (2) and at most one for any other non-zero status.
    """
    if "Traceback" in out or "Traceback" in err:
        return "traceback in the output"
    if status not in allowed:
        return f"exit status {status}"
    lines = err_lines(err)
    if status == 2 and len(lines) != 1:
        return f"{len(lines)} lines on stderr for bad input"
    if status != 0 and len(lines) > 1:
        return f"{len(lines)} lines on stderr"
    return None


def check_case_file(case: GeneratedCase, folder: Path, argv_extra: tuple = (),
                    command: str = "check", runner=run_in_process,
                    allowed: frozenset = CHECK_OK) -> tuple[int, str, str]:
    """Run ``purgeplan COMMAND case`` and assert the contract; returns the run."""
    path = folder / "case.toml"
    path.write_bytes(case.data)
    result = runner([command, str(path), *argv_extra])
    if result is None:
        problem = "no answer within the time-out (a hang)"
    else:
        problem = contract_violation(*result, allowed)
    assert problem is None, (f"{problem}\ncase: {case.describe()}\n"
                             f"stderr: {(result or ('', '', ''))[2][-2000:]!r}\n"
                             f"stdout tail: {(result or ('', '', ''))[1][-500:]!r}")
    return result


def first_alternative(case: GeneratedCase) -> str:
    """Name of the first alternative of the case, or of its seed when it does not validate."""
    from purgeplan.case import expand_alternatives, parse_case_text

    try:
        return expand_alternatives(parse_case_text(case.data.decode("utf-8")))[0][0]
    except Exception:
        return expand_alternatives(parse_case_text(SEED_TEXT[case.seed]))[0][0]


FUZZ = settings(max_examples=300, deadline=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


# ---------------------------------------------------------------------------
# the writer itself


@pytest.mark.parametrize("seed", sorted(SEEDS))
def test_writer_round_trips_the_seed_cases(seed):
    assert tomllib.loads(toml_dumps(SEED_DOCS[seed])) == SEED_DOCS[seed]


def test_writer_handles_special_values():
    doc = {"a": {"x": math.inf, "y": -math.inf, "s": 'q"\\\n\x7f\x01', "d": dt.date(2020, 1, 2)},
           "b": [{"k": 1}, {"k": {"m": [1, 2.5]}}], "": {"weird key": True}}
    back = tomllib.loads(toml_dumps(doc))
    assert back == doc
    assert math.isnan(tomllib.loads(toml_dumps({"n": math.nan}))["n"])


_SCALARS = (st.booleans() | st.integers(-(2**63), 2**63 - 1) | st.floats(allow_nan=False)
            | st.text(max_size=8) | st.dates() | st.times() | st.datetimes())
_DOCS = st.dictionaries(st.text(max_size=6), st.recursive(
    _SCALARS, lambda inner: st.lists(inner, max_size=3)
    | st.dictionaries(st.text(max_size=6), inner, max_size=3), max_leaves=12), max_size=4)


@settings(max_examples=100, deadline=None)
@given(_DOCS)
def test_writer_round_trips_generated_documents(doc):
    assert tomllib.loads(toml_dumps(doc)) == doc


# ---------------------------------------------------------------------------
# the fuzz tests


@FUZZ
@given(st.data())
def test_check_survives_mutated_cases(data):
    case = make_case(HypothesisChooser(data))
    with tempfile.TemporaryDirectory() as tmp:
        status, _, _ = check_case_file(case, Path(tmp))
    event(f"check exit {status}")


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.data())
def test_check_survives_raw_byte_mutations(data):
    ch = HypothesisChooser(data)
    seed = ch.choice(sorted(SEEDS))
    log: list[str] = []
    raw = SEED_TEXT[seed].encode("utf-8")
    for _ in range(ch.integer(1, 3)):
        raw = mutate_bytes(ch, raw, log)
    with tempfile.TemporaryDirectory() as tmp:
        status, _, _ = check_case_file(GeneratedCase(seed, raw, log), Path(tmp))
    event(f"check exit {status}")


@pytest.fixture(scope="module")
def worker():
    w = CliWorker()
    yield w
    w.close()


OPTIMIZE_TIMEOUT_S = 60


def _solve_mutated(worker, ch, command: str, *extra: str) -> None:
    """One mostly valid mutated case through a solving command, in the worker process."""
    case = perturb_case(ch) if ch.integer(0, 3) else make_case(ch, max_mutations=2)
    with tempfile.TemporaryDirectory() as tmp:
        status, _, _ = check_case_file(
            case, Path(tmp), command=command,
            argv_extra=("--alternative", first_alternative(case), *extra),
            runner=lambda argv: worker.run(argv, OPTIMIZE_TIMEOUT_S), allowed=OPTIMIZE_OK)
    event(f"{command} exit {status}")


@settings(max_examples=20, deadline=None, phases=[Phase.explicit, Phase.reuse, Phase.generate],
          suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_optimize_survives_mutated_cases(worker, data):
    _solve_mutated(worker, HypothesisChooser(data), "optimize", "--time-limit", "20")


@settings(max_examples=10, deadline=None, phases=[Phase.explicit, Phase.reuse, Phase.generate],
          suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_evaluate_survives_mutated_cases(worker, data):
    ch = HypothesisChooser(data)
    purge = ch.choice(["0.02", "0.0001", "0.5", "0", "1", "-0.1", "nan"])
    _solve_mutated(worker, ch, "evaluate", "--purge-fraction", purge)


@settings(max_examples=3, deadline=None, phases=[Phase.explicit, Phase.reuse, Phase.generate],
          suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_study_survives_mutated_cases(worker, data, tmp_path_factory):
    """A few whole studies (workbook, JSON and plots) of mutated hydrogenation cases."""
    ch = HypothesisChooser(data)
    case = perturb_case(ch, seed="hydrogenation") if ch.integer(0, 2) else make_case(
        ch, max_mutations=1, seed="hydrogenation")
    out = tmp_path_factory.mktemp("study")
    status, _, _ = check_case_file(
        case, out, command="study",
        argv_extra=("-o", str(out / "s.xlsx"), "--json", str(out / "s.json"), "--plots",
                    str(out / "plots"), "--quiet", "--time-limit", "20"),
        runner=lambda argv: worker.run(argv, 4 * OPTIMIZE_TIMEOUT_S), allowed=OPTIMIZE_OK)
    if status == 2:
        assert not (out / "s.xlsx").exists() and not (out / "s.json").exists()
    event(f"study exit {status}")


@settings(max_examples=6, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.data())
def test_check_subprocess_mutated_cases(data):
    """A few through a real process: no warnings or tracebacks leak to stderr."""
    case = make_case(HypothesisChooser(data))
    with tempfile.TemporaryDirectory() as tmp:
        status, _, _ = check_case_file(case, Path(tmp), runner=run_subprocess)
    event(f"check exit {status}")


@pytest.mark.parametrize("seed", sorted(SEEDS))
def test_unmutated_seeds_are_valid(seed, tmp_path):
    status, _, err = check_case_file(GeneratedCase(seed, SEED_TEXT[seed].encode()), tmp_path)
    assert status == 0 and err == ""


@pytest.mark.parametrize("megabytes", [3, 8])
def test_file_of_several_megabytes_is_refused(tmp_path, megabytes):
    pad = b"# " + b"x" * 97 + b"\n"
    case = GeneratedCase("ammonia", SEED_TEXT["ammonia"].encode() + pad * (megabytes * 10_486),
                         [f"{megabytes} MB"])
    status, _, err = check_case_file(case, tmp_path)
    assert status == 2 and "limit" in err


#: Labels an alternative may be given: text of any length and character, and wrong types.
_LABELS = (st.text(max_size=80) | st.sampled_from(WRONG_TYPES + SPECIAL_NUMBERS)
           | st.just("x" * 60) | st.just("x" * 61) | st.just("=1+1") | st.just("a\nb"))


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(_LABELS, min_size=1, max_size=3))
def test_check_survives_generated_alternative_labels(labels):
    """alternatives[].label: a valid label passes, any other gives one line naming the field."""
    grades = ["standard", "purified", "blend"]
    doc = copy.deepcopy(SEED_DOCS["ammonia"])
    doc["alternatives"] = [{"name": f"grade {g}", "choices": {"makeup_grade": g},
                            "label": label} for g, label in zip(grades, labels, strict=False)]
    case = GeneratedCase("ammonia", toml_dumps(doc).encode("utf-8"),
                         [f"labels {[_brief(x) for x in labels]}"])
    with tempfile.TemporaryDirectory() as tmp:
        status, _, err = check_case_file(case, Path(tmp))
    texts = [x.strip().casefold() for x in labels if isinstance(x, str)]
    valid = all(isinstance(x, str) and 0 < len(x) <= 60 and x.strip()
                and not any(ord(c) < 32 for c in x) for x in labels) and \
        len(set(texts)) == len(texts)
    if valid:
        assert status == 0, err
    else:
        assert status == 2 and "label" in err, err
    event(f"label check exit {status}")


# ---------------------------------------------------------------------------
# edge cases of the reader, the schema and the solver; each test states the expected
# behaviour (check_case_file asserts the contract: exit status, stderr lines, no traceback)


@pytest.mark.parametrize("depth", [1_000, 3_000])
@pytest.mark.parametrize("kind", ["array", "inline"])
def test_deeply_nested_inline_values_are_refused(tmp_path, depth, kind):
    """Past the recursion limit of the TOML reader: refused, not an internal error."""
    data = SEED_TEXT["ammonia"].encode() + deep_text(kind, depth)
    status, _, err = check_case_file(GeneratedCase("ammonia", data, [f"deep {kind} {depth}"]),
                                     tmp_path)
    assert status == 2 and "nest" in err, err


@pytest.mark.parametrize("depth", [1_000, 5_000])
def test_deeply_nested_option_tables_are_refused(tmp_path, depth):
    """An option patch nested a thousand levels deep is refused before it is merged."""
    data = SEED_TEXT["ammonia"].encode() + deep_text("option", depth)
    status, _, err = check_case_file(GeneratedCase("ammonia", data, [f"deep option {depth}"]),
                                     tmp_path)
    assert status == 2 and "nest" in err, err


@pytest.mark.parametrize("kind, where", [("array", "deep_fuzz.x"), ("inline", "deep_fuzz.x"),
                                         ("table", "k0.k1.k2"),
                                         ("option", "options.deep_fuzz.one")])
def test_moderately_nested_values_are_refused(tmp_path, kind, where):
    """Beyond the case's nesting limit: refused with the key path where it goes too deep."""
    data = SEED_TEXT["ammonia"].encode() + deep_text(kind, DOC_DEPTH)
    status, _, err = check_case_file(GeneratedCase("ammonia", data, [kind]), tmp_path)
    assert status == 2, err
    assert "nest deeper than" in err and f"error: {where}" in err, err


@pytest.mark.parametrize("old, new, expected", [
    # (1 + i) ** n == 1.0 in floating point: refused by the schema
    ("discount_rate = 0.08", "discount_rate = 1e-17", 2),
    ("discount_rate = 0.08", "discount_rate = 5e-324", 2),
    ("life_years = 20", "life_years = 1e-15", 2),
    # at the edges of what is accepted: the capital recovery factor is still computed
    ("discount_rate = 0.08", "discount_rate = 1e-6", 0),
    ("discount_rate = 0.08", "discount_rate = 0", 0),
    ("life_years = 20", "life_years = 1", 0),
])
def test_degenerate_capital_recovery_is_handled(tmp_path, old, new, expected):
    assert SEED_TEXT["ammonia"].count(old) == 1
    text = SEED_TEXT["ammonia"].replace(old, new)
    status, _, err = check_case_file(GeneratedCase("ammonia", text.encode(), [new]), tmp_path)
    assert status == expected, err
    if expected == 2:
        assert f"economics.{new.split()[0]}" in err, err


@pytest.mark.parametrize("old, new, expected, field", [
    # the separator's cooling at and past the edges of what is accepted
    ("water_approach_k = 8", "water_approach_k = 0", 0, ""),
    ("water_approach_k = 8", "water_approach_k = 1e-300", 0, ""),
    ("water_approach_k = 8", "water_approach_k = 1e300", 2, "separator.cooling.water_approach_k"),
    ("carnot_fraction = 0.55", "carnot_fraction = 5e-324", 2, "separator.cooling.carnot_fraction"),
    ("carnot_fraction = 0.55", "carnot_fraction = 1", 0, ""),
    ("carnot_fraction = 0.55", "coefficient_of_performance = 1e-300", 2,
     "separator.cooling.coefficient_of_performance"),
    ("condenser_approach_k = 10", "condenser_approach_k = nan", 2,
     "separator.cooling.condenser_approach_k"),
    ("water_temperature_c = 30", "water_temperature_c = -273.15", 2,
     "separator.cooling.water_temperature_c"),
    ("water_temperature_c = 30", "water_temperature_c = 100", 2,
     "separator.cooling.water_temperature_c"),
    ("water_temperature_c = 30", "water_temperature_c = 99.9", 0, ""),
    ("water_price_per_gj = 0.40", "water_price_per_gj = inf", 2,
     "separator.cooling.water_price_per_gj"),
])
def test_separator_cooling_edges_are_handled(tmp_path, old, new, expected, field):
    """The demo's separator cooling at extreme values: accepted, or refused in one line
    naming the key."""
    assert SEED_TEXT["ammonia"].count(old) == 1
    text = SEED_TEXT["ammonia"].replace(old, new)
    status, _, err = check_case_file(GeneratedCase("ammonia", text.encode(), [new]), tmp_path)
    assert status == expected, err
    if expected == 2:
        assert field in err, err


DEMO_RATE = 'rate = { law = "temkin_pyzhev", effectiveness_factor = "dyson_simon" }'


@pytest.mark.parametrize("beds, expected", [
    # adiabatic beds under the demo's rate table, at and past the edges of what is accepted
    ("[380, 400, 420]", 0), ("[400.0]", 0), ("[200, 600]", 0),
    ("[400, 400, 400, 400, 400, 400]", 0),
    ("[]", 2), ("[400, 400, 400, 400, 400, 400, 400]", 2), ("[199.99]", 2), ("[600.01]", 2),
    ("[400, nan]", 2), ("[inf]", 2), ('["400"]', 2), ("400", 2), ("[true]", 2), ("[[400]]", 2),
    ("[1e308]", 2), ("[-273.15]", 2),
])
def test_adiabatic_bed_edges_are_handled(tmp_path, beds, expected):
    """The demo's converter as adiabatic beds at extreme inlet temperatures: accepted with
    a steady state, or refused in one line naming the key."""
    assert SEED_TEXT["ammonia"].count(DEMO_RATE) == 1
    text = SEED_TEXT["ammonia"].replace(
        DEMO_RATE, DEMO_RATE[:-2] + f", bed_inlet_temperatures_c = {beds} }}")
    status, _, err = check_case_file(
        GeneratedCase("ammonia", text.encode(), [f"bed_inlet_temperatures_c = {beds}"]), tmp_path)
    assert status == expected, err
    if expected == 2:
        assert "reactions[0].rate.bed_inlet_temperatures_c" in err, err


@pytest.mark.parametrize("keys, expected, field", [
    # quench between adiabatic beds under the demo's rate table, at and past the edges
    ('[400, 390, 380], between_beds = "quench", quench_temperature_c = 150', 0, ""),
    ('[400, 400], between_beds = "quench", quench_temperature_c = 0', 0, ""),
    ('[400, 400], between_beds = "quench", quench_temperature_c = 399.99', 0, ""),
    ('[400, 400], between_beds = "cooling"', 0, ""),
    ('[400, 400], between_beds = "quench", quench_temperature_c = 400', 2,
     "quench_temperature_c"),
    ('[400, 380], between_beds = "quench", quench_temperature_c = 390', 2,
     "quench_temperature_c"),
    ('[400, 400], between_beds = "quench", quench_temperature_c = -0.01', 2,
     "quench_temperature_c"),
    ('[400, 400], between_beds = "quench", quench_temperature_c = nan', 2,
     "quench_temperature_c"),
    ('[400, 400], between_beds = "quench", quench_temperature_c = inf', 2,
     "quench_temperature_c"),
    ('[400, 400], between_beds = "quench", quench_temperature_c = "150"', 2,
     "quench_temperature_c"),
    ('[400, 400], between_beds = "quench"', 2, "quench_temperature_c"),
    ('[400, 400], quench_temperature_c = 150', 2, "quench_temperature_c"),
    ('[400], between_beds = "quench", quench_temperature_c = 150', 2, "between_beds"),
    ('[400, 400], between_beds = "Quench", quench_temperature_c = 150', 2, "between_beds"),
    ('[400, 400], between_beds = true, quench_temperature_c = 150', 2, "between_beds"),
])
def test_quench_edges_are_handled(tmp_path, keys, expected, field):
    """The demo's converter as quenched adiabatic beds at extreme settings: accepted with
    a steady state, or refused in one line naming the key."""
    text = SEED_TEXT["ammonia"].replace(
        DEMO_RATE, DEMO_RATE[:-2] + f", bed_inlet_temperatures_c = {keys} }}")
    status, _, err = check_case_file(GeneratedCase("ammonia", text.encode(), [keys]), tmp_path)
    assert status == expected, err
    if expected == 2:
        assert f"reactions[0].rate.{field}" in err, err


_QUENCH_VALUES = (st.floats(allow_nan=True, allow_infinity=True).map(repr)
                  .map(lambda t: {"nan": "nan", "inf": "inf", "-inf": "-inf"}.get(t, t))
                  | st.integers(-10**4, 10**4).map(str)
                  | st.integers(0, 650).map(str) | st.floats(0.0, 650.0).map(repr)
                  | st.sampled_from(['"150"', "true", "[150]", "{}", "1e308", "-273.15"]))


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(beds=st.lists(st.integers(200, 600), min_size=0, max_size=3),
       between=st.sampled_from(['"quench"', '"cooling"', '"cold_shot"', "1", None]),
       quench=st.one_of(st.none(), _QUENCH_VALUES))
def test_generated_quench_settings_are_accepted_or_refused_in_one_line(tmp_path_factory,
                                                                       beds, between, quench):
    """Any bed list, between_beds and quench temperature on the demo's converter: a check
    that runs (exit 0, or 3 where no steady state is found at the case's conversion) or
    a one-line refusal naming a key of the rate table (exit 2), never a traceback."""
    keys = f"bed_inlet_temperatures_c = {beds}" if beds else ""
    for name, value in (("between_beds", between), ("quench_temperature_c", quench)):
        if value is not None:
            keys += (", " if keys else "") + f"{name} = {value}"
    text = SEED_TEXT["ammonia"].replace(DEMO_RATE, DEMO_RATE[:-2] + (
        f", {keys} }}" if keys else " }"))
    status, _, err = check_case_file(GeneratedCase("ammonia", text.encode(), [keys]),
                                     tmp_path_factory.mktemp("quench"))
    if status == 2:
        assert "reactions[0].rate" in err and err.strip().count("\n") == 0, err
    quench_valid = (between == '"quench"' and len(beds) >= 2 and quench is not None
                    and _finite_number(quench) and 0.0 <= float(quench) < min(beds))
    if quench_valid:
        assert status in (0, 3), err
    if quench is not None and between != '"quench"':
        assert status == 2, err
    event(f"quench check exit {status}")


def _finite_number(text: str) -> bool:
    try:
        tomllib.loads(f"v = {text}")
    except tomllib.TOMLDecodeError:
        return False
    value = tomllib.loads(f"v = {text}")["v"]
    return (isinstance(value, int | float) and not isinstance(value, bool)
            and math.isfinite(value))


@pytest.mark.parametrize("drop, expected", [("1e-15", 2), ("1e-300", 2), ("0.001", 0)])
def test_tiny_pressure_drop_is_handled(tmp_path, drop, expected):
    """A drop so small that the pressure ratio is 1.0 is refused; the smallest allowed works."""
    assert SEED_TEXT["hydrogenation"].count("pressure_drop_bar = 3\n") == 1
    text = SEED_TEXT["hydrogenation"].replace("pressure_drop_bar = 3",
                                             f"pressure_drop_bar = {drop}")
    status, _, err = check_case_file(
        GeneratedCase("hydrogenation", text.encode(), [f"pressure_drop = {drop}"]), tmp_path)
    assert status == expected, err
    if expected == 2:
        assert f"loop.pressure_drop_bar = {drop}:" in err, err


@pytest.mark.parametrize("value, expected", [
    ('"ideal_gas"', 0), ('"peng_robinson"', 0),
    ('"Peng-Robinson"', 2), ('""', 2), ("1", 2), ("nan", 2), ('["ideal_gas"]', 2),
])
def test_gas_model_values_are_handled(tmp_path, value, expected):
    """Only the two gas models are accepted; anything else is refused naming the key."""
    line = 'gas_model = "peng_robinson"'
    assert SEED_TEXT["hydrogenation"].count(line) == 1
    text = SEED_TEXT["hydrogenation"].replace(line, f"gas_model = {value}")
    status, _, err = check_case_file(
        GeneratedCase("hydrogenation", text.encode(), [f"gas_model = {value}"]), tmp_path)
    assert status == expected, err
    if expected == 2:
        assert "compression.gas_model" in err, err


def test_subnormal_production_is_handled(tmp_path):
    """A subnormal production (ammonia demo, equilibrium reactor) is refused in one line,
    with no numerical warnings leaking to stderr (a real process)."""
    text = SEED_TEXT["ammonia"].replace("production_t_d = 1200", "production_t_d = 5e-324")
    status, _, err = check_case_file(
        GeneratedCase("ammonia", text.encode(), ["production_t_d = 5e-324"]), tmp_path,
        runner=run_subprocess)
    assert status == 2 and "loop.production_t_d = 5e-324:" in err, err


def test_optimize_with_negative_tac_reports(worker, tmp_path):
    """The template with make-up gas at 0.5 per kmol: the fuel credit exceeds all costs, so
    the lowest TAC is negative; the optimum and its 1 % band are still reported."""
    text = SEED_TEXT["template"].replace("price_per_kmol = 2.0", "price_per_kmol = 0.5", 1)
    case = GeneratedCase("template", text.encode(), ["sources.syngas.price_per_kmol = 0.5"])
    target = tmp_path / "result.json"
    status, _, err = check_case_file(case, tmp_path, command="optimize",
                                     argv_extra=("--time-limit", "20", "--json", str(target)),
                                     runner=lambda argv: worker.run(argv, OPTIMIZE_TIMEOUT_S),
                                     allowed=OPTIMIZE_OK)
    assert status == 0, err
    records = json.loads(target.read_text(encoding="utf-8"))["alternatives"]
    (rec,) = [r for r in records if r["choices"].get("purge_destination") == "fuel"]
    assert rec["feasible"] is True and rec["tac_per_year"] < 0
    # burning the bought gas pays at these prices, and the result says so
    assert any(w.startswith("make-up gas 'syngas': fuel value") for w in rec["warnings"])
    low, high = rec["off_optimum"]["band_1pct_purge_fraction"]
    assert low <= rec["purge_fraction"] <= high


def test_optimize_with_subnormal_space_velocity_returns(worker, tmp_path):
    """A subnormal space velocity (an infinite catalyst volume) is refused promptly."""
    text = SEED_TEXT["hydrogenation"].replace("space_velocity_per_h = 3000",
                                             "space_velocity_per_h = 5e-324")
    case = GeneratedCase("hydrogenation", text.encode(), ["reactor.space_velocity_per_h = 5e-324"])
    status, _, err = check_case_file(
        case, tmp_path, command="optimize",
        argv_extra=("--alternative", first_alternative(case), "--time-limit", "1"),
        runner=lambda argv: worker.run(argv, 8), allowed=OPTIMIZE_OK)
    assert status == 2 and "reactor.space_velocity_per_h = 5e-324:" in err, err


@pytest.mark.parametrize("where, named", [("top", '"bad\\nkey"'),
                                          ("composition", "sources.standard.composition.")])
def test_newline_in_a_key_keeps_the_message_on_one_line(tmp_path, where, named):
    text = SEED_TEXT["ammonia"]
    if where == "top":
        text = '"bad\\nkey" = 1\n' + text
    else:
        text = text.replace("CH4 = 0.011 }", 'CH4 = 0.011, "X\\ny" = 0.0 }')
    status, _, err = check_case_file(GeneratedCase("ammonia", text.encode(), [where]), tmp_path)
    assert status == 2 and named in err, err
