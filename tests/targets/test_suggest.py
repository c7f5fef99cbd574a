"""The exact suggestion: one run at an upper bound, the answer a whole minute that passes, never short."""

from __future__ import annotations

import copy
import math
from typing import Any

import numpy as np
import pytest

from models import parse_batch, with_durations
from workers.jobs import run_batch
from workers.suggest import suggest
from workers.targets import (
    first_reaching,
    hold_done_at,
    longest_run_above,
    tempering_parameter,
    tempering_parameters,
)


def _passes(doc: dict[str, Any], step: str, seconds: float) -> bool:
    spec = with_durations(parse_batch(doc), {step: f"{seconds:.0f} s"})
    return all(c["passed"] for p in run_batch(spec)["parts"] for c in p["checks"] if c["step"] == step)


def test_hold_done_at_is_when_the_run_has_lasted_long_enough() -> None:
    # by hand: above 845 from 150 s (interpolated) to 500 s, dips, above again from 650 s for good
    t = np.array([0.0, 100.0, 200.0, 500.0, 600.0, 700.0, 2000.0])
    temp = np.array([800.0, 840.0, 850.0, 850.0, 840.0, 850.0, 850.0])
    assert hold_done_at(t, temp, 845.0, 300.0) == pytest.approx(450.0)  # the first run is long enough
    assert hold_done_at(t, temp, 845.0, 600.0) == pytest.approx(650.0 + 600.0)  # only the second one is
    assert hold_done_at(t, temp, 845.0, 5000.0) is None
    # it agrees with the longest run: a step that ends at hold_done_at holds exactly the time required
    end = int(np.searchsorted(t, 1250.0))
    cut_t = np.append(t[:end], 1250.0)
    cut = np.append(temp[:end], np.interp(1250.0, t, temp))
    assert longest_run_above(cut_t, cut, 845.0)[0] == pytest.approx(600.0)


def test_tempering_parameters_grow_to_the_whole_histories_value() -> None:
    t = np.linspace(0.0, 7200.0, 61)
    temp = np.linspace(400.0, 600.0, 61)
    p = tempering_parameters(t, temp, 20.0)
    assert np.all(np.diff(p[1:]) >= 0.0)
    assert p[-1] == pytest.approx(tempering_parameter(t, temp, 20.0), rel=1e-12)
    for i in (10, 30, 50):  # each prefix's P is the P of that prefix alone
        assert p[i] == pytest.approx(tempering_parameter(t[: i + 1], temp[: i + 1], 20.0), rel=1e-9)
    when = first_reaching(t, p, p[40])
    assert when == pytest.approx(t[40], abs=1e-6)


def test_the_exact_answer_is_the_shortest_whole_minute_that_passes(batch_doc: dict[str, Any]) -> None:
    answer = suggest(parse_batch(batch_doc), "heat")
    d = answer["duration_s"]
    assert d is not None and d % 60.0 == 0.0
    assert answer["method"] == "exact" and answer["simulations"] == 2  # the upper bound, the confirmation
    assert answer["limiting_part"] == "thick"
    assert "exact:" in answer["how"] and "confirmed by a run at" in answer["how"]
    assert "of the 1 part(s)" in answer["how"]  # the thin plate has an hour to spare: not run again
    assert _passes(batch_doc, "heat", d)
    assert not _passes(batch_doc, "heat", d - 60.0)  # a minute less misses: it is exact to the minute
    # the figure it read, before rounding, lies in the last minute
    exact = float(answer["how"].split("exact: ")[1].split(" s ")[0])
    assert d - 60.0 < exact <= d


def test_the_search_agrees_and_takes_more_runs(batch_doc: dict[str, Any]) -> None:
    spec = parse_batch(batch_doc)
    exact, search = suggest(spec, "heat"), suggest(spec, "heat", method="search")
    assert search["method"] == "search" and search["duration_s"] == exact["duration_s"]
    assert search["simulations"] > exact["simulations"]


def test_a_step_with_room_is_shortened_exactly(batch_doc: dict[str, Any]) -> None:
    doc = copy.deepcopy(batch_doc)
    doc["parts"] = doc["parts"][:1]  # the thin plate alone needs far less than the file's 2 h
    answer = suggest(parse_batch(doc), "heat")
    d = answer["duration_s"]
    assert answer["method"] == "exact" and d is not None and d < 3600.0
    assert _passes(doc, "heat", d) and not _passes(doc, "heat", d - 60.0)


def test_a_ramped_step_is_searched_and_says_why(batch_doc: dict[str, Any]) -> None:
    doc = copy.deepcopy(batch_doc)
    doc["schedule"][0]["ambient_start"] = "400 degC"  # the ramp stretches with the step
    answer = suggest(parse_batch(doc), "heat")
    assert answer["method"] == "search" and "ramps" in answer["how"]
    d = answer["duration_s"]
    assert d is not None and d % 60.0 == 0.0
    assert _passes(doc, "heat", d) and not _passes(doc, "heat", d - 60.0)


def test_a_step_without_targets_has_nothing_to_clear(batch_doc: dict[str, Any]) -> None:
    doc = copy.deepcopy(batch_doc)
    doc["schedule"].append({"name": "cool", "duration": "1 h", "ambient": "20 degC", "htc": "10 W/m^2/K"})
    answer = suggest(parse_batch(doc), "cool")
    assert answer["method"] == "none" and answer["simulations"] == 0
    assert answer["duration_s"] is None and "nothing to clear" in (answer["reason"] or "")


def test_no_duration_when_a_limit_is_passed_before_the_hold_is_done(batch_doc: dict[str, Any]) -> None:
    doc = copy.deepcopy(batch_doc)
    # the surface must stay below 850 degC in an 860 degC furnace while the core holds 845 degC
    doc["parts"][0]["targets"][1]["stay_below"] = "850 degC"
    answer = suggest(parse_batch(doc), "heat")
    assert answer["duration_s"] is None and answer["method"] == "exact"
    assert "thin" in (answer["reason"] or "") and "stay_below" in (answer["reason"] or "")


def test_no_duration_when_a_fall_is_too_late_whatever_the_length(batch_doc: dict[str, Any]) -> None:
    doc = copy.deepcopy(batch_doc)
    doc["parts"][0]["targets"][2]["within"] = "10 s"  # the core cannot fall below 200 degC in 10 s
    answer = suggest(parse_batch(doc), "quench")
    assert answer["duration_s"] is None and "does not change that" in (answer["reason"] or "")


def test_a_hold_above_the_furnace_is_found_impossible_in_one_run(batch_doc: dict[str, Any]) -> None:
    doc = copy.deepcopy(batch_doc)
    doc["parts"][1]["targets"][0]["hold_above"] = "870 degC"  # the furnace is at 860 degC
    answer = suggest(parse_batch(doc), "heat")
    assert answer["duration_s"] is None and answer["simulations"] == 1
    assert "never reaches 870 degC" in (answer["reason"] or "") and "thick" in (answer["reason"] or "")


def test_an_answer_beyond_the_files_duration_doubles_the_upper_bound(batch_doc: dict[str, Any]) -> None:
    doc = copy.deepcopy(batch_doc)
    doc["schedule"][0]["duration"] = "20 min"  # the thick bar needs about 2 h: three upper-bound runs
    doc["parts"][0]["targets"][0]["for"] = "20 min"
    doc["parts"][1]["targets"][0]["for"] = "20 min"
    answer = suggest(parse_batch(doc), "heat")
    d = answer["duration_s"]
    assert answer["method"] == "exact" and d is not None and d > 3600.0
    assert answer["simulations"] >= 3 and math.isfinite(d)
    assert _passes(doc, "heat", d) and not _passes(doc, "heat", d - 60.0)
