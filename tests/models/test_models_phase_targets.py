"""Hardness and martensite targets in the batch file: every form the file can give them in, each
problem named at its field, the quench rule, which parts follow phases, warnings on chemistry."""

from __future__ import annotations

from typing import Any

import pytest

from models import SpecError, parse_batch, target_warnings
from models.resolved import dump_resolved, load_resolved

Doc = dict[str, Any]
INLINE = {"conductivity": "40 W/m/K", "density": "7850 kg/m^3", "specific_heat": "600 J/kg/K"}


def _target(doc: Doc, **fields: object) -> Doc:
    doc["parts"][0]["targets"] = [{"step": "quench", **fields}]
    return doc


def _problems(doc: Doc) -> list[tuple[str, str]]:
    with pytest.raises(SpecError) as info:
        parse_batch(doc)
    return [(p.path, p.message) for p in info.value.problems]


@pytest.mark.parametrize(
    ("kind", "value", "limit"),
    [
        ("hardness_min", 45, 45.0),
        ("hardness_min", 45.5, 45.5),
        ("hardness_min", "45 HRC", 45.0),
        ("hardness_min", "45hrc", 45.0),
        ("hardness_min", "45", 45.0),
        ("martensite_min", 90, 0.9),
        ("martensite_min", "90 %", 0.9),
        ("martensite_min", "50%", 0.5),
        ("martensite_min", 100, 1.0),
    ],
)
@pytest.mark.parametrize("at", ["core", "surface"])
@pytest.mark.parametrize("shape", [("plate", {"thickness": "50 mm"}), ("bar", {"diameter": "50 mm"})])
def test_phase_targets_accepted(
    doc: Doc, kind: str, value: object, limit: float, at: str, shape: tuple[str, dict[str, str]]
) -> None:
    part = doc["parts"][0]
    part.pop("thickness")
    part["shape"], sizes = shape
    part.update(sizes)
    spec = parse_batch(_target(doc, at=at, **{kind: value}))
    (target,) = spec.parts[0].targets
    assert target.kind.value == kind and target.is_phase and target.point == at
    assert target.phase_limit == pytest.approx(limit)
    assert spec.parts[0].follows_phases  # a phase target asks for the phases, on the nominal chemistry
    again = load_resolved(dump_resolved(spec)).parts[0].targets[0]
    assert again.phase_limit == pytest.approx(limit)


@pytest.mark.parametrize(
    ("fields", "path", "fragment"),
    [
        ({"at": "core", "hardness_min": 75}, "hardness_min", "20 to 68 HRC"),
        ({"at": "core", "hardness_min": 12}, "hardness_min", "20 to 68 HRC"),
        ({"at": "core", "hardness_min": "hard"}, "hardness_min", "Rockwell C"),
        ({"at": "core", "hardness_min": "45 HB"}, "hardness_min", "Rockwell C"),
        ({"at": "core", "hardness_min": True}, "hardness_min", "Rockwell C"),
        ({"at": "core", "martensite_min": 0}, "martensite_min", "above 0"),
        ({"at": "core", "martensite_min": "150 %"}, "martensite_min", "at most 100"),
        ({"at": "core", "martensite_min": "most"}, "martensite_min", "martensite share"),
        ({"hardness_min": 45}, "at", "required: core or surface"),
        ({"martensite_min": 90}, "at", "required: core or surface"),
        ({"at": "corner", "hardness_min": 45}, "at", "core or surface, not corner"),
        ({"at": "underside", "martensite_min": 90}, "at", "core or surface, not underside"),
        ({"at": "core", "hardness_min": 45, "martensite_min": 90}, "", "exactly one"),
        ({"at": "core", "hardness_min": 45, "within": "5 min"}, "within", "only used with fall_below"),
        ({"at": "core", "hardness_min": 45, "for": "5 min"}, "for", "only used with hold_above"),
        ({"at": "core", "martensite_min": 90, "constant": 20}, "constant", "only used with temper"),
    ],
)
def test_phase_target_errors_name_the_field(
    doc: Doc, fields: dict[str, object], path: str, fragment: str
) -> None:
    where = "parts[0].targets[0]" + (f".{path}" if path else "")
    problems = _problems(_target(doc, **fields))
    assert any(p == where and fragment in m for p, m in problems), problems


@pytest.mark.parametrize("kind", ["hardness_min", "martensite_min"])
def test_a_phase_target_on_a_step_that_is_not_a_quench(doc: Doc, kind: str) -> None:
    """The heat step (860 degC) is no quench; nor is a second cold step that is not colder than the one
    before it (common practice: a quench follows the austenitizing soak)."""
    doc["parts"][0]["targets"] = [{"step": "heat", "at": "core", kind: 45}]
    (problem,) = [(p, m) for p, m in _problems(doc) if kind in p]
    assert problem[0] == f"parts[0].targets[0].{kind}"
    assert "step 'heat' is not one" in problem[1] and "860 degC" in problem[1]
    doc["schedule"].append({"name": "air", "duration": "1 h", "ambient": "60 degC", "medium": "air-still"})
    doc["parts"][0]["targets"] = [{"step": "air", "at": "core", kind: 45}]
    (problem,) = _problems(doc)
    assert problem[0] == f"parts[0].targets[0].{kind}" and "not colder than the step before" in problem[1]
    doc["schedule"][1]["ambient"] = "420 degC"  # the quench itself now too hot to be one
    doc["parts"][0]["targets"] = [{"step": "quench", "at": "core", kind: 45}]
    assert any("at most 400 degC" in m for _, m in _problems(doc))


def test_a_first_step_quench_of_parts_that_start_hot(doc: Doc) -> None:
    doc["schedule"] = doc["schedule"][1:]
    doc["parts"][0]["initial"] = "850 degC"
    _target(doc, at="core", hardness_min=40)
    assert parse_batch(doc).parts[0].targets[0].is_phase


@pytest.mark.parametrize(
    ("shape", "material", "composition", "fragment"),
    [
        (
            ("block", {"thickness": "50 mm", "width": "80 mm", "length": "90 mm"}),
            "4140",
            None,
            "not in a block",
        ),
        (("cylinder", {"diameter": "50 mm", "length": "90 mm"}), "4140", None, "not in a cylinder"),
        (("plate", {"thickness": "50 mm"}), "304", None, "austenitic"),
        (("plate", {"thickness": "50 mm"}), "plain-carbon", None, "no composition for plain-carbon"),
        (("plate", {"thickness": "50 mm"}), INLINE, None, "inline material has no composition"),
    ],
)
@pytest.mark.parametrize("kind", ["hardness_min", "martensite_min"])
def test_a_phase_target_needs_a_steel_whose_phases_are_followed(
    doc: Doc,
    shape: tuple[str, dict[str, str]],
    material: object,
    composition: object,
    fragment: str,
    kind: str,
) -> None:
    part = doc["parts"][0]
    part.pop("thickness")
    part["shape"], sizes = shape
    part.update(sizes)
    part["material"] = material
    part["composition"] = composition
    _target(doc, at="core", **{kind: 50})
    problems = _problems(doc)
    assert any(p == f"parts[0].targets[0].{kind}" and fragment in m for p, m in problems), problems


@pytest.mark.parametrize("material", ["plain-carbon", INLINE])
def test_a_steel_without_catalog_chemistry_takes_the_heats(doc: Doc, material: object) -> None:
    doc["parts"][0]["material"] = material
    doc["parts"][0]["composition"] = {"C": 0.42, "Mn": 0.8}
    spec = parse_batch(_target(doc, at="surface", hardness_min=50))
    assert spec.parts[0].follows_phases


def test_which_parts_follow_phases(doc: Doc) -> None:
    """A composition or a phase target asks for the phases; neither keeps the single curve (and its
    speed); a block never follows them, and a composition given for one is warned about."""
    spec = parse_batch(doc)
    assert not spec.parts[0].follows_phases
    doc["parts"][0]["composition"] = {"C": 0.40}
    assert parse_batch(doc).parts[0].follows_phases
    doc["parts"][0].update({"shape": "block", "width": "80 mm", "length": "90 mm"})
    spec = parse_batch(doc)
    assert not spec.parts[0].follows_phases
    (warning,) = [w for w in target_warnings(spec) if w.path == "parts[0].composition"]
    assert "plates and bars only" in warning.message and "block" in warning.message


def test_chemistry_outside_a_methods_range_warns_only_where_an_estimate_is_made(doc: Doc) -> None:
    """A heat's chemistry outside a method's range is warned about at ``composition`` on a plate (whose
    phases are followed); on a block (no estimate) only the shape is, not the methods."""
    doc["parts"][0]["material"] = "1010"  # 0.105 % C nominal: inside every range (lower bounds 0.10)
    assert not target_warnings(parse_batch(doc))
    doc["parts"][0]["composition"] = {"C": 0.08}
    texts = [w.message for w in target_warnings(parse_batch(doc)) if w.path == "parts[0].composition"]
    assert any("0.08 % C" in t and "Maynier" in t for t in texts)
    doc["parts"][0].update({"shape": "block", "width": "80 mm", "length": "90 mm"})
    texts = [w.message for w in target_warnings(parse_batch(doc))]
    assert len(texts) == 1 and "plates and bars only" in texts[0]
