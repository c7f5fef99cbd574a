"""Valid batch files parse, keep what the user wrote, and give SI values."""

from __future__ import annotations

from typing import Any

import pytest
import yaml
from pydantic import ValidationError

from models import BatchSpec, SpecError, TargetKind, parse_batch, with_step_durations


def test_design_example_parses(design_text: str) -> None:
    spec = parse_batch(yaml.safe_load(design_text))
    assert spec.batch == "LD-0417 frame plates"
    heat, quench = spec.schedule
    assert (heat.duration, heat.duration_s) == ("3 h", 10800.0)
    assert (heat.ambient_c, heat.ambient_start_c) == (860.0, 400.0)
    assert heat.htc_w_m2k == 150.0 and heat.htc_table.is_constant
    assert heat.emissivity_value == 0.8
    assert quench.duration_s == 600.0 and quench.medium == "oil-agitated"
    assert quench.htc_w_m2k is None and not quench.htc_table.is_constant
    assert quench.emissivity_value == 0.0
    part = spec.parts[0]
    assert (part.id, part.shape, part.thickness, part.thickness_m) == ("P-101", "plate", "50 mm", 0.05)
    assert part.half_sizes_m == (0.025,)
    assert part.initial_c == 20.0
    assert part.material == "4140" and part.material_data.conductivity.at(27.0) == 37.7
    hold, stay, fall = part.targets
    assert (hold.kind, hold.point, hold.limit_c, hold.for_s) == (TargetKind.HOLD_ABOVE, "core", 845.0, 1800.0)
    assert (stay.kind, stay.point, stay.limit_c) == (TargetKind.STAY_BELOW, "surface", 900.0)
    assert (fall.kind, fall.limit_c, fall.within_s) == (TargetKind.FALL_BELOW, 200.0, 480.0)
    assert spec.total_duration_s == 11400.0
    assert spec.step("quench") is quench


def test_round_trip_through_dump_keeps_the_user_text(doc: dict[str, Any]) -> None:
    spec = parse_batch(doc)
    again = parse_batch(spec.model_dump(by_alias=True, exclude_none=True))
    assert again == spec
    assert again.parts[0].targets[0].for_ == "30 min"


def test_imperial_units_and_unquoted_material_number(doc: dict[str, Any]) -> None:
    doc["schedule"][0].update(ambient="1580 degF", htc="26.4 Btu/(h ft^2 F)", duration="180 min")
    doc["parts"][0].update(thickness="2 in", material=4140, initial="68 F")
    spec = parse_batch(doc)
    assert spec.schedule[0].ambient_c == pytest.approx(860.0)
    assert spec.schedule[0].htc_w_m2k == pytest.approx(149.9, abs=0.1)
    assert spec.parts[0].thickness_m == pytest.approx(0.0508)
    assert spec.parts[0].material == "4140"
    assert spec.parts[0].initial_c == pytest.approx(20.0)


def test_shapes_give_half_sizes_in_engine_order(doc: dict[str, Any]) -> None:
    base = {k: v for k, v in doc["parts"][0].items() if k not in ("shape", "thickness", "targets")}
    doc["parts"] = [
        {**base, "id": "bar", "shape": "bar", "diameter": "100 mm"},
        {**base, "id": "blk", "shape": "block", "thickness": "20 mm", "width": "40 mm", "length": "60 mm"},
        {**base, "id": "cyl", "shape": "cylinder", "diameter": "80 mm", "length": "0.2 m"},
    ]
    bar, block, cyl = parse_batch(doc).parts
    assert bar.half_sizes_m == pytest.approx((0.05,))
    assert block.half_sizes_m == pytest.approx((0.01, 0.02, 0.03))
    assert cyl.half_sizes_m == pytest.approx((0.04, 0.1))
    assert cyl.diameter_m == pytest.approx(0.08) and cyl.length_m == pytest.approx(0.2)
    assert bar.thickness_m is None


def test_inline_material_with_tables(doc: dict[str, Any]) -> None:
    doc["parts"][0]["material"] = {
        "conductivity": [["20 degC", "50 W/m/K"], ["800 degC", "27 W/m/K"]],
        "density": "7850 kg/m^3",
        "specific_heat": [["68 degF", "0.11 Btu/lb/F"]],
    }
    data = parse_batch(doc).parts[0].material_data
    assert data.conductivity.temp_c == (20.0, 800.0) and data.conductivity.value == (50.0, 27.0)
    assert data.conductivity.at(410.0) == pytest.approx(38.5)
    assert data.density.value == (7850.0,)
    assert data.specific_heat.temp_c == pytest.approx((20.0,))
    assert data.specific_heat.value[0] == pytest.approx(460.5, abs=0.1)


def test_lower_face_and_medium_emissivity(doc: dict[str, Any]) -> None:
    doc["schedule"][0]["lower_face"] = {"htc": "30 W/m^2/K", "ambient": "500 degC"}
    doc["schedule"][1]["medium"] = "air-still"
    spec = parse_batch(doc)
    lower = spec.schedule[0].lower_face
    assert lower is not None and lower.htc_w_m2k == 30.0 and lower.ambient_c == 500.0
    assert lower.emissivity_value == 0.0
    assert spec.schedule[1].emissivity_value == 0.8  # the catalog default of air-still


def test_difference_and_temper_targets(doc: dict[str, Any]) -> None:
    doc["schedule"].append({"name": "temper", "duration": "2 h", "ambient": "600 degC", "medium": "furnace"})
    doc["parts"][0]["targets"] = [
        {"step": "quench", "max_difference": "90 degF"},
        {"step": "temper", "temper_parameter_min": 17500},
        {"step": "temper", "temper_parameter_max": "18500", "constant": 18, "at": "surface"},
    ]
    diff, low, high = parse_batch(doc).parts[0].targets
    assert (diff.kind, diff.point, diff.max_difference_k) == (TargetKind.MAX_DIFFERENCE, "surface", 50.0)
    assert (low.kind, low.point, low.parameter, low.constant_value) == (
        TargetKind.TEMPER_PARAMETER_MIN,
        "core",
        17500.0,
        20.0,
    )
    assert (high.parameter, high.constant_value, high.point) == (18500.0, 18.0, "surface")


def test_model_validate_directly_gives_the_same(doc: dict[str, Any]) -> None:
    assert BatchSpec.model_validate(doc) == parse_batch(doc)


def test_rerun_with_new_step_durations(doc: dict[str, Any]) -> None:
    spec = parse_batch(doc)
    longer = with_step_durations(spec, {"heat": "4 h"})
    assert longer.schedule[0].duration_s == 14400.0 and longer.schedule[1] == spec.schedule[1]
    with pytest.raises(SpecError) as info:
        with_step_durations(spec, {"heat": "0 h"})
    assert [p.path for p in info.value.problems] == ["schedule[0].duration"]
    with pytest.raises(SpecError, match="no step named 'soak'; steps: heat, quench"):
        with_step_durations(spec, {"soak": "1 h"})


def test_rules_also_hold_for_models_built_in_code(doc: dict[str, Any]) -> None:
    spec = parse_batch(doc)
    with pytest.raises(ValidationError, match="duplicate part id 'P-101'"):
        BatchSpec(batch="x", schedule=list(spec.schedule), parts=[spec.parts[0], spec.parts[0]])


def test_the_files_own_temperature_unit(doc: dict[str, Any]) -> None:
    assert parse_batch(doc).temperature_unit == "degC"
    doc["schedule"][0]["ambient"] = "1580 degF"
    for part in doc["parts"]:
        part["initial"] = "70 F"
        for target in part.get("targets", []):
            for key in ("hold_above", "stay_below", "fall_below"):
                if key in target:
                    target[key] = "1500 degF"
    assert parse_batch(doc).temperature_unit == "degF"
