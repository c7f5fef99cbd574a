"""The resolved batch stored at submit reads back as the same spec, without validating again."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest

from models import BatchSpec, SpecError, load_batch_file, parse_batch, with_durations
from models.resolved import dump_resolved, load_resolved

DEMO = Path(__file__).resolve().parents[2] / "scheduler" / "demo" / "demo.yaml"


def _every_kind(doc: dict[str, Any]) -> dict[str, Any]:
    """The design example with a block of inline material (tables) and the other target kinds."""
    doc["parts"].append(
        {
            "id": "B-7",
            "shape": "block",
            "thickness": "2 in",
            "width": "100 mm",
            "length": "0.3 m",
            "material": {
                "conductivity": [["20 degC", "42 W/m/K"], ["800 degC", "26 W/m/K"]],
                "density": "7850 kg/m^3",
                "specific_heat": "470 J/kg/K",
            },
            "initial": "68 degF",
            "targets": [
                {"step": "heat", "at": "corner", "max_difference": "150 K"},
                {"step": "quench", "temper_parameter_min": 16000, "constant": 19.5},
            ],
        }
    )
    return doc


@pytest.mark.parametrize("source", ["demo", "design", "lower face", "every kind", "rerun"])
def test_the_stored_spec_reads_back_equal(source: str, doc: dict[str, Any]) -> None:
    if source == "demo":
        spec = load_batch_file(DEMO)
    elif source == "design":
        spec = parse_batch(doc)
    elif source == "lower face":
        doc["schedule"][0]["lower_face"] = {"htc": "40 W/m^2/K", "ambient": "700 degC", "emissivity": 0.5}
        spec = parse_batch(doc)
    elif source == "every kind":
        spec = parse_batch(_every_kind(doc))
    else:
        spec = with_durations(parse_batch(doc), {"heat": "4 h"})
    stored = json.loads(json.dumps(dump_resolved(spec)))  # as the JSON column gives it back
    back = load_resolved(stored)
    assert back == spec
    assert back.schedule[0].duration_s == spec.schedule[0].duration_s
    assert [p.material_data.conductivity for p in back.parts] == [
        p.material_data.conductivity for p in spec.parts
    ]


def test_reading_it_back_runs_no_rule(doc: dict[str, Any], monkeypatch: pytest.MonkeyPatch) -> None:
    stored = dump_resolved(parse_batch(doc))

    def refuse(*_: object) -> list[Any]:
        raise AssertionError("validated again")

    monkeypatch.setattr(BatchSpec, "_rules", classmethod(refuse))
    assert load_resolved(stored).parts[0].id == "P-101"
    with pytest.raises(SpecError, match="validated again"):  # the spy is live: parsing does validate
        parse_batch(doc)
