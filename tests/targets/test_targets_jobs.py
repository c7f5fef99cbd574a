"""The shared job code: the result contract, one part alone, reruns with new durations, the soak search."""

from __future__ import annotations

import copy
from typing import Any

import pytest

from models import SpecError, parse_batch, with_durations
from workers.convert import engine_inputs
from workers.jobs import NOTICE, run_batch, run_part
from workers.suggest import suggest

CONTRACT_FLAG_KEYS = {"step", "at", "target", "required", "achieved", "message"}


def heat_checks(doc: dict[str, Any], duration_s: float) -> list[bool]:
    spec = with_durations(parse_batch(doc), {"heat": f"{duration_s} s"})
    return [c["passed"] for p in run_batch(spec)["parts"] for c in p["checks"] if c["step"] == "heat"]


def test_result_follows_the_contract(batch_doc: dict[str, Any]) -> None:
    seen: list[tuple[int, int]] = []
    result = run_batch(parse_batch(batch_doc), lambda done, total: seen.append((done, total)))
    assert {"batch", "parts", "notice"} <= set(result)
    assert result["notice"] == NOTICE
    assert seen[0] == (0, 2) and seen[-1] == (2, 2)
    thin, thick = result["parts"]
    assert {"id", "flagged", "flags", "checks", "trace"} <= set(thin)
    assert not thin["flagged"] and thin["flags"] == []
    assert len(thin["checks"]) == 6 and all(c["passed"] for c in thin["checks"])
    assert thick["flagged"]
    (flag,) = thick["flags"]
    assert CONTRACT_FLAG_KEYS | {"margin"} <= set(flag)
    assert flag["margin"].startswith("-")
    assert flag["message"].startswith("core held at or above 845 degC for ")


def test_run_part_matches_the_batch_entry(batch_doc: dict[str, Any]) -> None:
    spec = parse_batch(batch_doc)
    whole = run_batch(spec)["parts"][1]
    alone = run_part(spec, "thick")
    assert alone["id"] == "thick" and alone["flagged"] == whole["flagged"]
    assert alone["checks"][0]["margin_value"] == pytest.approx(whole["checks"][0]["margin_value"], abs=1.0)
    with pytest.raises(SpecError, match="no part 'nope'"):
        run_part(spec, "nope")


def test_with_durations_replaces_and_names_bad_fields(batch_doc: dict[str, Any]) -> None:
    spec = parse_batch(batch_doc)
    new = with_durations(spec, {"heat": "3 h"})
    assert new.step("heat").duration_s == 3 * 3600.0
    assert spec.step("heat").duration_s == 2 * 3600.0  # the original is untouched
    with pytest.raises(SpecError) as info:
        with_durations(spec, {"soak": "1 h", "heat": "5 kg", "quench": "-3 min"})
    paths = [p.path for p in info.value.problems]
    assert paths == ["durations.soak", "durations.heat", "durations.quench"]


def test_suggest_finds_the_shortest_heat(batch_doc: dict[str, Any]) -> None:
    answer = suggest(parse_batch(batch_doc), "heat")
    assert answer["reason"] is None
    assert answer["limiting_part"] == "thick"
    d = answer["duration_s"]
    assert d is not None
    assert all(heat_checks(batch_doc, d))
    assert not all(heat_checks(batch_doc, 0.95 * d))


def test_suggest_shortens_a_step_that_has_room(batch_doc: dict[str, Any]) -> None:
    doc = copy.deepcopy(batch_doc)
    doc["parts"] = doc["parts"][:1]  # the thin plate alone needs far less than 2 h
    answer = suggest(parse_batch(doc), "heat")
    d = answer["duration_s"]
    assert d is not None and d < 3600.0
    assert all(heat_checks(doc, d))
    assert not all(heat_checks(doc, 0.95 * d))


def test_suggest_says_when_no_duration_can_work(batch_doc: dict[str, Any]) -> None:
    doc = copy.deepcopy(batch_doc)
    # the surface must stay below 850 degC in an 860 degC furnace while the core holds 845 degC
    doc["parts"][0]["targets"][1]["stay_below"] = "850 degC"
    answer = suggest(parse_batch(doc), "heat")
    assert answer["duration_s"] is None and answer["reason"] is not None
    assert "stay_below" in answer["reason"] and "thin" in answer["reason"]


def test_suggest_rejects_an_unknown_step(batch_doc: dict[str, Any]) -> None:
    with pytest.raises(SpecError, match="no step named 'soak'"):
        suggest(parse_batch(batch_doc), "soak")


def test_convert_uses_tables_and_faces() -> None:
    doc = {
        "batch": "convert",
        "schedule": [
            {
                "name": "heat",
                "duration": "1 h",
                "ambient": "850 degC",
                "ambient_start": "400 degC",
                "htc": "150 W/m^2/K",
                "emissivity": 0.8,
                "lower_face": {"htc": "30 W/m^2/K", "ambient": "700 degC"},
            },
            {"name": "quench", "duration": "10 min", "ambient": "60 degC", "medium": "oil-agitated"},
        ],
        "parts": [
            {"id": "A", "shape": "plate", "thickness": "40 mm", "material": "4140", "initial": "20 degC"}
        ],
    }
    spec = parse_batch(doc)
    parts, steps = engine_inputs(spec)
    heat, quench = steps
    assert heat.ambient_start_c == 400.0 and heat.ambient_c == 850.0
    assert heat.face.htc.value == (150.0,) and heat.face.emissivity == 0.8
    assert heat.second_face is not None and heat.second_face.htc.value == (30.0,)
    assert heat.second_ambient_c == 700.0
    oil = spec.schedule[1].htc_table
    assert quench.face.htc.temp_c == oil.temp_c and quench.face.htc.value == oil.value
    assert parts[0].shape.half_sizes_m == pytest.approx((0.02,))
    assert parts[0].material.density == spec.parts[0].material_data.density.at(20.0)
