"""Every validation rule of the batch file: a bad input, the field path it names, and what it says."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import pytest

from models import SpecError, limits, parse_batch

Doc = dict[str, Any]


def _step(doc: Doc, i: int, **changes: Any) -> None:
    doc["schedule"][i].update(changes)


def _part(doc: Doc, i: int, **changes: Any) -> None:
    doc["parts"][i].update(changes)


def _drop(mapping: dict[str, Any], *keys: str) -> None:
    for key in keys:
        mapping.pop(key, None)


def _target(doc: Doc, j: int, **changes: Any) -> None:
    doc["parts"][0]["targets"][j] = changes


def _add_part(doc: Doc, **changes: Any) -> None:
    doc["parts"].append({**doc["parts"][0], **changes})


def _lower_face_on_bar(doc: Doc) -> None:
    _step(doc, 0, lower_face={"htc": "20 W/m^2/K"})
    _part(doc, 0, shape="bar", diameter="5 cm")
    _drop(doc["parts"][0], "thickness")


def _problems(doc: Doc) -> list[tuple[str, str]]:
    with pytest.raises(SpecError) as info:
        parse_batch(doc)
    return [(p.path, p.message) for p in info.value.problems]


CASES: list[tuple[str, Callable[[Doc], None], str, str]] = [
    # unit strings: required, right dimension, finite
    (
        "bare number",
        lambda d: _step(d, 0, duration="3"),
        "schedule[0].duration",
        "a bare number needs a unit",
    ),
    (
        "yaml number",
        lambda d: _part(d, 0, thickness=50),
        "parts[0].thickness",
        "got 50: a bare number needs a unit",
    ),
    ("wrong dimension", lambda d: _part(d, 0, thickness="3 h"), "parts[0].thickness", "which is a time"),
    ("htc dimension", lambda d: _step(d, 0, htc="150 W"), "schedule[0].htc", "heat transfer coefficient"),
    ("nan size", lambda d: _part(d, 0, thickness="nan mm"), "parts[0].thickness", "not finite"),
    ("inf time", lambda d: _step(d, 1, duration="inf s"), "schedule[1].duration", "not finite"),
    ("unknown unit", lambda d: _part(d, 0, thickness="5 mmm"), "parts[0].thickness", "unknown unit 'mmm'"),
    # sizes, durations, temperatures, emissivity
    ("zero size", lambda d: _part(d, 0, thickness="0 mm"), "parts[0].thickness", "must be more than zero"),
    (
        "negative size",
        lambda d: _part(d, 0, thickness="-5 mm"),
        "parts[0].thickness",
        "must be more than zero",
    ),
    (
        "huge size",
        lambda d: _part(d, 0, thickness="3 m"),
        "parts[0].thickness",
        "must be at most 2 m, got '3 m'",
    ),
    ("zero time", lambda d: _step(d, 0, duration="0 h"), "schedule[0].duration", "must be more than zero"),
    (
        "negative time",
        lambda d: _step(d, 0, duration="-1 h"),
        "schedule[0].duration",
        "must be more than zero",
    ),
    (
        "long step",
        lambda d: _step(d, 0, duration="31 day"),
        "schedule[0].duration",
        "must be at most 30 days",
    ),
    ("below 0 K", lambda d: _step(d, 0, ambient="-300 degC"), "schedule[0].ambient", "below absolute zero"),
    ("below 0 K F", lambda d: _part(d, 0, initial="-500 degF"), "parts[0].initial", "below absolute zero"),
    (
        "hot",
        lambda d: _step(d, 0, ambient_start="2500 degC"),
        "schedule[0].ambient_start",
        "at most 2000 degC",
    ),
    ("negative htc", lambda d: _step(d, 0, htc="-1 W/m^2/K"), "schedule[0].htc", "must not be negative"),
    ("eps high", lambda d: _step(d, 0, emissivity=1.2), "schedule[0].emissivity", "between 0 and 1, got 1.2"),
    ("eps low", lambda d: _step(d, 0, emissivity=-0.1), "schedule[0].emissivity", "between 0 and 1"),
    ("eps nan", lambda d: _step(d, 0, emissivity=float("nan")), "schedule[0].emissivity", "not finite"),
    (
        "eps text",
        lambda d: _step(d, 0, emissivity="shiny"),
        "schedule[0].emissivity",
        "emissivity between 0 and 1",
    ),
    # names and catalog entries
    ("dup part", lambda d: _add_part(d), "parts[1].id", "duplicate part id 'P-101' (first used by parts[0])"),
    (
        "dup step",
        lambda d: _step(d, 1, name="heat"),
        "schedule[1].name",
        "duplicate step name 'heat' (first used by schedule[0])",
    ),
    (
        "missing step",
        lambda d: _target(d, 0, step="soak", at="core", stay_below="900 degC"),
        "parts[0].targets[0].step",
        "no step named 'soak' in the schedule; steps: heat, quench",
    ),
    (
        "unknown material",
        lambda d: _part(d, 0, material="4150"),
        "parts[0].material",
        "unknown material '4150'; known materials: plain-carbon, 1010, 1045, 4140, 4340, 304",
    ),
    ("material type", lambda d: _part(d, 0, material=["4140"]), "parts[0].material", "known materials:"),
    (
        "unknown medium",
        lambda d: _step(d, 1, medium="oil"),
        "schedule[1].medium",
        "unknown medium 'oil'; known media: oil-still, oil-agitated",
    ),
    # exchange at the faces
    (
        "htc and medium",
        lambda d: _step(d, 1, htc="1 W/m^2/K"),
        "schedule[1].medium",
        "either htc or medium, not both",
    ),
    ("no htc", lambda d: _drop(d["schedule"][0], "htc"), "schedule[0].htc", "required: give htc"),
    (
        "lower face",
        lambda d: _step(d, 0, lower_face={"ambient": "20 degC"}),
        "schedule[0].lower_face.htc",
        "required: give htc",
    ),
    (
        "lower face not plate",
        _lower_face_on_bar,
        "schedule[0].lower_face",
        "modelled for plates only; not a plate: P-101",
    ),
    # shape-specific sizes and unknown fields
    ("plate size", lambda d: _drop(d["parts"][0], "thickness"), "parts[0].thickness", "required for a plate"),
    (
        "plate extra",
        lambda d: _part(d, 0, diameter="5 mm"),
        "parts[0].diameter",
        "a plate takes thickness only",
    ),
    ("bar", lambda d: _part(d, 0, shape="bar"), "parts[0].diameter", "required for a bar"),
    (
        "bar extra",
        lambda d: _part(d, 0, shape="bar", diameter="5 cm"),
        "parts[0].thickness",
        "remove thickness",
    ),
    ("block", lambda d: _part(d, 0, shape="block"), "parts[0].width", "required for a block"),
    (
        "cylinder",
        lambda d: _part(d, 0, shape="cylinder", diameter="5 cm"),
        "parts[0].length",
        "for a cylinder",
    ),
    (
        "bad shape",
        lambda d: _part(d, 0, shape="sphere"),
        "parts[0].shape",
        "must be 'plate', 'bar', 'block' or",
    ),
    ("typo field", lambda d: _part(d, 0, thikness="5 mm"), "parts[0].thikness", "did you mean 'thickness'?"),
    ("extra step field", lambda d: _step(d, 0, colour="red"), "schedule[0].colour", "unknown field"),
    ("missing initial", lambda d: _drop(d["parts"][0], "initial"), "parts[0].initial", "required"),
    ("missing batch", lambda d: _drop(d, "batch"), "batch", "required"),
    ("empty id", lambda d: _part(d, 0, id="  "), "parts[0].id", "must not be empty"),
    ("part not mapping", lambda d: d["parts"].append("P-2"), "parts[1]", "expected a mapping of fields"),
    ("parts not list", lambda d: d.update(parts={"id": "x"}), "parts", "expected a list"),
    # targets
    (
        "no kind",
        lambda d: _target(d, 0, step="heat", at="core"),
        "parts[0].targets[0]",
        "give exactly one of hold_above, stay_below",
    ),
    (
        "two kinds",
        lambda d: _target(
            d, 0, step="heat", at="core", stay_below="900 degC", hold_above="800 degC", **{"for": "1 h"}
        ),
        "parts[0].targets[0]",
        "got hold_above, stay_below",
    ),
    (
        "hold needs for",
        lambda d: _target(d, 0, step="heat", at="core", hold_above="845 degC"),
        "parts[0].targets[0].for",
        "required with hold_above",
    ),
    (
        "fall needs within",
        lambda d: _target(d, 0, step="quench", at="core", fall_below="200 degC"),
        "parts[0].targets[0].within",
        "required with fall_below",
    ),
    (
        "within elsewhere",
        lambda d: _target(d, 0, step="heat", at="core", stay_below="900 degC", within="1 h"),
        "parts[0].targets[0].within",
        "only used with fall_below, not with stay_below",
    ),
    (
        "needs at",
        lambda d: _target(d, 0, step="heat", stay_below="900 degC"),
        "parts[0].targets[0].at",
        "required: core, surface, corner or underside",
    ),
    (
        "bad at",
        lambda d: _target(d, 0, step="heat", at="middle", stay_below="900 degC"),
        "parts[0].targets[0].at",
        "",
    ),
    (
        "corner on plate",
        lambda d: _target(d, 0, step="heat", at="corner", stay_below="900 degC"),
        "parts[0].targets[0].at",
        "corner is reported for blocks and cylinders only, not for a plate",
    ),
    (
        "difference is a delta",
        lambda d: _target(d, 0, step="quench", max_difference="50"),
        "parts[0].targets[0].max_difference",
        "expected a temperature difference such as '50 K'",
    ),
    (
        "difference at core",
        lambda d: _target(d, 0, step="quench", max_difference="50 K", at="core"),
        "parts[0].targets[0].at",
        "core is not allowed",
    ),
    (
        "for longer than step",
        lambda d: _target(d, 0, step="quench", at="core", hold_above="100 degC", **{"for": "1 h"}),
        "parts[0].targets[0].for",
        "longer than step 'quench' itself",
    ),
    (
        "temper parameter",
        lambda d: _target(d, 0, step="heat", temper_parameter_min=-5),
        "parts[0].targets[0].temper_parameter_min",
        "must be more than zero",
    ),
    (
        "constant elsewhere",
        lambda d: _target(d, 0, step="heat", at="core", stay_below="900 degC", constant=20),
        "parts[0].targets[0].constant",
        "only used with temper_parameter_max or temper_parameter_min",
    ),
    # inline material
    (
        "inline missing",
        lambda d: _part(d, 0, material={"conductivity": "40 W/m/K", "density": "7850 kg/m^3"}),
        "parts[0].material.specific_heat",
        "required",
    ),
    (
        "inline unit",
        lambda d: _part(
            d, 0, material={"conductivity": "40", "density": "7850 kg/m^3", "specific_heat": "460 J/kg/K"}
        ),
        "parts[0].material.conductivity",
        "a bare number needs a unit",
    ),
    (
        "inline table order",
        lambda d: _part(
            d,
            0,
            material={
                "conductivity": [["800 degC", "27 W/m/K"], ["20 degC", "50 W/m/K"]],
                "density": "7850 kg/m^3",
                "specific_heat": "460 J/kg/K",
            },
        ),
        "parts[0].material.conductivity",
        "row 1: temperatures must increase",
    ),
    (
        "inline table row",
        lambda d: _part(
            d,
            0,
            material={"conductivity": [["20 degC"]], "density": "7850 kg/m^3", "specific_heat": "460 J/kg/K"},
        ),
        "parts[0].material.conductivity",
        "row 0: expected [temperature, value]",
    ),
    # counts
    ("no steps", lambda d: d.update(schedule=[]), "schedule", "needs at least one step"),
    ("no parts", lambda d: d.update(parts=[]), "parts", "needs at least one part"),
]


@pytest.mark.parametrize(("change", "path", "fragment"), [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_rule(doc: Doc, change: Callable[[Doc], None], path: str, fragment: str) -> None:
    change(doc)
    problems = _problems(doc)
    assert any(p == path and fragment in m for p, m in problems), problems


def test_too_many_parts_and_steps(doc: Doc) -> None:
    doc["parts"] = [{**doc["parts"][0], "id": f"P-{i}", "targets": []} for i in range(limits.MAX_PARTS + 1)]
    doc["schedule"] += [{**doc["schedule"][0], "name": f"s{i}"} for i in range(limits.MAX_STEPS)]
    problems = _problems(doc)
    assert ("parts", f"a batch holds at most 5000 parts, got {limits.MAX_PARTS + 1}") in problems
    assert ("schedule", f"a batch holds at most 50 steps, got {limits.MAX_STEPS + 2}") in problems


def test_all_problems_are_reported_together(doc: Doc) -> None:
    _step(doc, 0, duration="3", emissivity=2)
    _step(doc, 1, name="heat", medium="oil")
    _part(doc, 0, thickness="50", material="4150", width="1 m")
    _add_part(doc, initial=20)
    doc["parts"][0]["targets"].append({"step": "soak", "at": "corner", "stay_below": "900 degC"})
    paths = {p for p, _ in _problems(doc)}
    assert paths >= {
        "schedule[0].duration",
        "schedule[0].emissivity",
        "schedule[1].name",
        "schedule[1].medium",
        "parts[0].thickness",
        "parts[0].material",
        "parts[0].width",
        "parts[0].targets[3].step",
        "parts[0].targets[3].at",
        "parts[1].id",
        "parts[1].initial",
    }


def test_problems_come_in_file_order(doc: Doc) -> None:
    _part(doc, 0, thickness="50")
    _step(doc, 1, duration="0 s")
    _step(doc, 0, duration="0 s")
    paths = [p for p, _ in _problems(doc)]
    assert paths == ["schedule[0].duration", "schedule[1].duration", "parts[0].thickness"]


def test_messages_carry_no_pydantic_boilerplate(doc: Doc) -> None:
    _step(doc, 0, duration="3")
    _part(doc, 0, foo=1)
    for _, message in _problems(doc):
        assert "Value error" not in message and "errors.pydantic.dev" not in message
        assert "Extra inputs" not in message
