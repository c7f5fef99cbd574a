"""What every input passes before validation (models.text), and the JSON form of stored results."""

from __future__ import annotations

import json

import numpy as np
import pytest

from models import SpecError, parse_batch
from models.results import json_safe
from models.text import part_id_problem, text_problem, value_problems


def test_text_problems_name_the_character() -> None:
    assert text_problem("plain text, with\ttab and\nline") is None
    assert "U+0000" in (text_problem("a\x00b") or "")
    assert "U+D800" in (text_problem("a\ud800") or "")
    assert "line break" in (text_problem("a\nb", single_line=True) or "")


def test_value_problems_walk_keys_values_and_numbers() -> None:
    doc = {"a": [1.0, float("nan"), {"b\x00": 1}], "c": float("inf"), "d": "ok"}
    found = dict(value_problems(doc))
    assert set(found) == {("a", 1), ("a", 2, "'b\\x00'"), ("c",)}


@pytest.mark.parametrize("good", ["P-101", "Träger Ω-7 (Süd)", "A.1_b+2,c:3", "部品-1"])
def test_safe_part_ids(good: str) -> None:
    assert part_id_problem(good) is None


@pytest.mark.parametrize("bad", ["P/1", "P?1", "P#1", "P%1", "P\\1", "..", "P\r\n1", "P\x7f"])
def test_unsafe_part_ids(bad: str) -> None:
    assert part_id_problem(bad) is not None


def test_too_many_parts_are_refused_before_any_part_is_checked() -> None:
    doc = {"batch": "x", "schedule": [], "parts": [{"junk": i} for i in range(30)]}
    with pytest.raises(SpecError) as info:
        parse_batch(doc, max_parts=10)
    assert [(p.path, p.message) for p in info.value.problems] == [
        ("parts", "a batch holds at most 10 parts, got 30")
    ]


def test_json_safe_keeps_plain_values_and_cleans_the_rest() -> None:
    plain = {"trace": {"core_c": [1.5, None, 3.0]}, "flags": [], "n": 2}
    assert json_safe(plain) is plain, "already strict JSON: returned as it is"
    mixed = {"a": np.float64(1.5), "b": np.array([1.0, np.inf]), "c": float("nan"), 3: (1, 2)}
    cleaned = json_safe(mixed)
    assert cleaned == {"a": 1.5, "b": [1.0, None], "c": None, "3": [1, 2]}
    json.dumps(cleaned, allow_nan=False)
