"""Every duration soakline prints is read back everywhere it reads one: files, reruns, the suggestion."""

from __future__ import annotations

import copy
from typing import Any

import numpy as np
import pytest

from models import parse_batch, parse_time, with_durations
from workers.suggest import suggest
from workers.targets import format_duration

# Seconds from a second to the 30-day product limit, through every branch of the printed form
# ("45 s", "12.5 min", "2 h 05 min") and the boundaries between them.
SECONDS = sorted(
    {*np.geomspace(1.0, 30 * 86400.0, 60).round(1).tolist(), 119.4, 119.6, 120.0, 5997.0, 6000.0, 7199.0}
)


def _resolution(seconds: float) -> float:
    """Half the last printed digit: whole seconds, tenths of a minute, whole minutes."""
    return 0.5 if seconds < 119.5 else (3.0 if seconds < 6000.0 else 30.0)


@pytest.mark.parametrize("seconds", SECONDS)
def test_each_printed_duration_parses_back(seconds: float) -> None:
    text = format_duration(seconds)
    assert parse_time(text) == pytest.approx(seconds, abs=_resolution(seconds) + 1e-9), text
    signed = format_duration(-seconds, signed=True)
    assert parse_time(signed) == pytest.approx(-seconds, abs=_resolution(seconds) + 1e-9), signed


@pytest.mark.parametrize("text", ["2 h 21 min", "2 h 05 min", "1 h 5 min 30 s", "12.5 min", "45 s"])
def test_printed_forms_are_accepted_in_a_batch_file_and_a_rerun(batch_doc: dict[str, Any], text: str) -> None:
    doc = copy.deepcopy(batch_doc)
    doc["schedule"][0]["duration"] = text
    for part in doc["parts"]:
        for target in part["targets"]:
            if "hold_above" in target:
                target["for"] = text  # a hold's time is a duration too
    spec = parse_batch(doc)
    assert spec.step("heat").duration_s == parse_time(text)
    assert spec.parts[0].targets[0].for_s == parse_time(text)
    rerun = with_durations(spec, {"heat": text, "quench": text})
    assert rerun.step("heat").duration_s == rerun.step("quench").duration_s == parse_time(text)


def test_the_suggestion_as_printed_is_a_valid_rerun(batch_doc: dict[str, Any]) -> None:
    spec = parse_batch(batch_doc)
    answer = suggest(spec, "heat")
    assert answer["duration"] is not None
    rerun = with_durations(spec, {"heat": answer["duration"]})
    assert rerun.step("heat").duration_s == pytest.approx(answer["duration_s"], abs=30.0)
