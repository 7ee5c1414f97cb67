"""The case template written by `purgeplan new`, and its commented-out examples.

The template passes `check` as shipped, and so does every example block
("# example: NAME" and the commented-out TOML lines after it, up to a blank
line) when it alone is uncommented where it stands.  Every commented-out
setting is inside such a block, and every key the case schema accepts appears
in the template, live or in an example.
"""

from __future__ import annotations

import re
import tomllib
import types
import typing
from pathlib import Path
from typing import Any

import pytest
from pydantic import BaseModel

from purgeplan.case import Case, parse_case_text
from purgeplan.cli import main

TEMPLATE = Path(__file__).resolve().parents[1] / "templates" / "case_template.toml"
LINES = TEMPLATE.read_text(encoding="utf-8").splitlines(keepends=True)

MARKER = re.compile(r"^# example: ([a-z0-9_]+)\s*$")
#: A commented-out key (``# key = ...``) or table header (``# [table]``).
COMMENTED_TOML = re.compile(r"^#\s*([A-Za-z_][A-Za-z0-9_.-]*\s*=|\[)")


def example_blocks(lines: list[str]) -> dict[str, range]:
    """Line numbers (0-based) of each example block's commented TOML, by name."""
    blocks: dict[str, range] = {}
    for i, line in enumerate(lines):
        found = MARKER.match(line)
        if not found:
            continue
        name = found.group(1)
        assert name not in blocks, f"example {name!r} is marked twice"
        end = i + 1
        while end < len(lines) and lines[end].strip():
            end += 1
        blocks[name] = range(i + 1, end)
    return blocks


BLOCKS = example_blocks(LINES)


def uncommented(name: str) -> str:
    """The template with the lines of example ``name`` uncommented in place."""
    lines = list(LINES)
    for i in BLOCKS[name]:
        assert lines[i].startswith("# "), f"example {name!r}, line {i + 1}: {lines[i]!r}"
        lines[i] = lines[i][2:]
    return "".join(lines)


def check(path: Path, capsys) -> str:
    """Run `purgeplan check` on path; every alternative must reach a steady state."""
    code = main(["check", str(path)])
    out, err = capsys.readouterr()
    assert code == 0, err
    assert out.rstrip().endswith("case is valid"), out
    count = int(re.search(r"^alternatives: (\d+),", out, re.M).group(1))
    # each alternative's state opens with its per-pass conversion (none without a state)
    assert len(re.findall(r"^ +per-pass conversion \d", out, re.M)) == count, out
    assert "not met" not in out, out
    return out


def test_the_template_as_shipped_passes_check(tmp_path, capsys):
    target = tmp_path / "case.toml"
    target.write_bytes(TEMPLATE.read_bytes())
    check(target, capsys)


@pytest.mark.parametrize("name", sorted(BLOCKS))
def test_each_example_passes_check_when_uncommented_in_place(name, tmp_path, capsys):
    target = tmp_path / "case.toml"
    target.write_text(uncommented(name), encoding="utf-8")
    check(target, capsys)


def test_each_example_changes_the_case():
    """Uncommenting a block changes the validated case: no example is left inert."""
    shipped = parse_case_text(TEMPLATE.read_text(encoding="utf-8"))
    for name in BLOCKS:
        assert parse_case_text(uncommented(name)) != shipped, name


def test_every_commented_out_setting_is_in_a_marked_example():
    assert BLOCKS, "the template marks no examples"
    inside = {i for block in BLOCKS.values() for i in block}
    for name, block in BLOCKS.items():
        assert block, f"example {name!r} has no lines"
        for i in block:
            assert LINES[i].startswith("# "), f"example {name!r}, line {i + 1}: {LINES[i]!r}"
    strays = [f"line {i + 1}: {line.rstrip()}" for i, line in enumerate(LINES)
              if i not in inside and COMMENTED_TOML.match(line)]
    assert not strays, "commented-out TOML outside a '# example: NAME' block:\n" + "\n".join(
        strays)


def test_the_stray_line_finder_sees_an_unmarked_example():
    lines = [*LINES, "\n", "# makeup_sources = [\"syngas\"]\n", "\n", "# [options.a.b]\n"]
    inside = {i for block in example_blocks(lines).values() for i in block}
    strays = [i for i, line in enumerate(lines) if i not in inside and COMMENTED_TOML.match(line)]
    assert strays == [len(LINES) + 1, len(LINES) + 3]


def _model_of(annotation: Any) -> Any:
    """The annotation without ``Annotated`` metadata and without ``| None``."""
    if typing.get_origin(annotation) is typing.Annotated:
        annotation = typing.get_args(annotation)[0]
    args = [a for a in typing.get_args(annotation) if a is not type(None)]
    if typing.get_origin(annotation) in (typing.Union, types.UnionType) and len(args) == 1:
        return _model_of(args[0])
    return annotation


def _is_model(annotation: Any) -> bool:
    return isinstance(annotation, type) and issubclass(annotation, BaseModel)


def schema_keys(model: type[BaseModel]) -> set[str]:
    """Every key of the case schema as MODEL.key, through nested models, lists and tables."""
    keys, stack, seen = set(), [model], set()
    while stack:
        current = stack.pop()
        if current in seen:
            continue
        seen.add(current)
        for name, field in current.model_fields.items():
            keys.add(f"{current.__name__}.{name}")
            todo = [field.annotation]
            while todo:
                annotation = _model_of(todo.pop())
                if _is_model(annotation):
                    stack.append(annotation)
                else:
                    todo.extend(typing.get_args(annotation))
    return keys


def keys_given(annotation: Any, value: Any, found: set[str]) -> None:
    """Add MODEL.key for every schema key that ``value`` (parsed TOML) gives."""
    annotation = _model_of(annotation)
    origin = typing.get_origin(annotation)
    if _is_model(annotation) and isinstance(value, dict):
        for key, item in value.items():
            field = annotation.model_fields.get(key)
            if field is not None:
                found.add(f"{annotation.__name__}.{key}")
                keys_given(field.annotation, item, found)
    elif origin is list and isinstance(value, list):
        for item in value:
            keys_given(typing.get_args(annotation)[0], item, found)
    elif origin is dict and isinstance(value, dict):
        for item in value.values():
            keys_given(typing.get_args(annotation)[-1], item, found)


def test_every_case_key_appears_in_the_template():
    found: set[str] = set()
    for text in ["".join(LINES), *(uncommented(name) for name in BLOCKS)]:
        keys_given(Case, tomllib.loads(text), found)
    missing = sorted(schema_keys(Case) - found)
    assert not missing, f"case keys with no setting or example in the template: {missing}"


def test_the_key_walker_sees_nested_keys_and_their_absence():
    every = schema_keys(Case)
    for key in ("Case.exclude", "SizingSpec.conversion_max", "InletRatio.value",
                "EquilibriumSpec.fugacity_correction_factor", "CapitalItem.exponent"):
        assert key in every
    shipped: set[str] = set()
    keys_given(Case, tomllib.loads("".join(LINES)), shipped)
    assert "CapitalItem.exponent" in shipped
    assert "SizingSpec.conversion_max" not in shipped
    sized: set[str] = set()
    keys_given(Case, tomllib.loads(uncommented("sized_reactor")), sized)
    assert "SizingSpec.conversion_max" in sized


def test_new_writes_exactly_the_shipped_template(tmp_path, capsys):
    target = tmp_path / "case.toml"
    assert main(["new", str(target)]) == 0
    capsys.readouterr()
    assert target.read_bytes() == TEMPLATE.read_bytes()
