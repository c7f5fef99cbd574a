"""Reading batch files: YAML and JSON, and one clear problem for every way a file can be unusable."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from models import Problem, SpecError, format_path, load_batch_file, parse_batch


def _single(path: Path | str) -> Problem:
    with pytest.raises(SpecError) as info:
        load_batch_file(path)
    assert len(info.value.problems) == 1
    return info.value.problems[0]


def test_yaml_and_json_files_load(tmp_path: Path, design_text: str) -> None:
    yaml_file = tmp_path / "batch.yaml"
    yaml_file.write_text(design_text, encoding="utf-8")
    json_file = tmp_path / "batch.json"
    json_file.write_text(json.dumps(yaml.safe_load(design_text)), encoding="utf-8")
    assert load_batch_file(yaml_file) == load_batch_file(str(json_file))


@pytest.mark.parametrize(
    ("name", "content", "fragment"),
    [
        ("empty.yaml", "", "the file is empty"),
        ("blank.yaml", "  \n\n", "the file is empty"),
        ("comments.yaml", "# nothing here\n", "holds no data"),
        (
            "list.yaml",
            "- a\n- b\n",
            "the top level must be a mapping with batch, schedule and parts; got a list",
        ),
        ("text.yaml", "just words\n", "the top level must be a mapping"),
        ("bad.yaml", "batch: x\nschedule: [\n  - a\n", "YAML syntax error at line 3, column 3"),
        ("tab.yaml", "batch: x\n\tparts: 1\n", "YAML syntax error at line 2"),
        ("twice.yaml", "batch: x\nbatch: y\n", "line 2, column 1: the key 'batch' appears twice"),
        ("bad.json", '{"batch": "x",\n "parts": [}', "JSON syntax error at line 2, column 12"),
    ],
)
def test_unusable_files(tmp_path: Path, name: str, content: str, fragment: str) -> None:
    file = tmp_path / name
    file.write_text(content, encoding="utf-8")
    problem = _single(file)
    assert problem.path == "" and fragment in problem.message


def test_missing_directory_and_binary_files(tmp_path: Path) -> None:
    assert "no such file" in _single(tmp_path / "nope.yaml").message
    assert "is a directory" in _single(tmp_path).message
    binary = tmp_path / "bin.yaml"
    binary.write_bytes(b"\xff\xfe\x00\x81")
    assert "not a UTF-8 text file" in _single(binary).message


def test_field_problems_from_a_file_name_the_field(tmp_path: Path, design_text: str) -> None:
    file = tmp_path / "batch.yaml"
    file.write_text(design_text.replace('"50 mm"', '"50"'), encoding="utf-8")
    with pytest.raises(SpecError) as info:
        load_batch_file(file)
    assert [p.path for p in info.value.problems] == ["parts[0].thickness"]
    assert str(info.value).startswith("parts[0].thickness: expected a length such as '50 mm', got '50'")


def test_top_level_must_be_a_mapping() -> None:
    docs: tuple[object, ...] = (None, [], "batch", 3)
    for doc in docs:
        with pytest.raises(SpecError, match="the top level must be a mapping"):
            parse_batch(doc)


def test_format_path() -> None:
    assert format_path(("parts", 2, "thickness")) == "parts[2].thickness"
    assert format_path(("schedule", 0, "lower_face", "htc")) == "schedule[0].lower_face.htc"
    assert format_path(()) == ""


_leaves = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=12),
    st.sampled_from(["50 mm", "3 h", "860 degC", "nan K", "4140", "plate", "corner", "oil-still", "heat"]),
)
_junk = st.recursive(
    _leaves,
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=8), inner, max_size=4),
    max_leaves=12,
)


def _replace_leaf(doc: Any, path: list[int], junk: Any) -> Any:
    """``doc`` with the node picked by ``path`` (indices into children, wrapped) replaced by ``junk``."""
    if not path or not isinstance(doc, dict | list) or not doc:
        return junk
    keys = list(doc) if isinstance(doc, dict) else list(range(len(doc)))
    key = keys[path[0] % len(keys)]
    copy: Any = dict(doc) if isinstance(doc, dict) else list(doc)
    copy[key] = _replace_leaf(doc[key], path[1:], junk)
    return copy


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(path=st.lists(st.integers(min_value=0, max_value=20), max_size=6), junk=_junk)
def test_any_damage_gives_spec_error_never_a_crash(doc: dict[str, Any], path: list[int], junk: Any) -> None:
    broken = _replace_leaf(doc, path, junk)
    try:
        parse_batch(broken)
    except SpecError as exc:
        assert exc.problems and all(isinstance(p.message, str) and p.message for p in exc.problems)


@settings(max_examples=200, deadline=None)
@given(doc=_junk)
def test_arbitrary_documents_give_spec_error_never_a_crash(doc: Any) -> None:
    with pytest.raises(SpecError):
        parse_batch(doc)
