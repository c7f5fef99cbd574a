"""The pages' texts in the viewer's unit, and the underside in the chart and the CSV (no browser)."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Any, cast

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

import numpy as np

from models.results import PartResult
from scheduler.web.units import Units
from scheduler.web.views import chart_payload, trace_csv
from workers.targets import Target, evaluate
from workers.thermal import Trace


def _trace() -> Trace:
    t = np.array([0.0, 300.0, 600.0])
    core = np.array([800.0, 500.0, 400.0])
    return Trace(
        time_s=t,
        step_index=np.zeros(3, dtype=np.int64),
        core_c=core,
        surface_c=core - 100.0,
        ambient_c=np.full(3, 60.0),
        bound_k=np.zeros(3),
        mean_c=core,
        heat_in_j_m3=np.zeros(3),
    )


def test_a_flags_texts_follow_the_viewers_unit() -> None:
    flag = evaluate(Target("quench", 0, "fall_below", "core", 200.0, 300.0), _trace()).flag_dict()
    said = Units("F", "mm").texts(dict(flag))
    # 200 degC = 392 degF, 500 degC = 932 degF (by definition of the scales)
    assert said.required == "< 392 degF within 5 min"
    assert said.achieved == "still 932 degF at 5 min, the time allowed"
    assert said.margin == "-540 degF" and "degC" not in said.message
    assert Units("C", "mm").texts(dict(flag)).required == "< 200 degC within 5 min"


def test_an_old_flag_without_facts_keeps_its_texts_and_converts_its_margin() -> None:
    old = {"required": "<= 900 degC", "achieved": "peak 905 degC", "margin": "-5 K", "margin_value": -5.0}
    said = Units("F", "mm").texts({**old, "margin_unit": "K", "message": "m"})
    assert (said.required, said.margin) == ("<= 900 degC", "-9 °F")


def test_the_underside_is_a_series_of_the_chart_and_a_column_of_the_csv() -> None:
    body: dict[str, Any] = {
        "id": "WP-1",
        "trace": {
            "time_s": [0.0, 60.0],
            "core_c": [20.0, 100.0],
            "surface_c": [20.0, 120.0],
            "underside_c": [20.0, 80.0],
            "ambient_c": [860.0, 860.0],
        },
        "checks": [],
        "steps": [{"name": "heat", "start_s": 0.0, "end_s": 60.0}],
    }
    chart = chart_payload(cast(PartResult, body), Units())
    assert chart["series"] == ["core", "surface", "underside", "ambient"]
    assert chart["data"][3] == [20.0, 80.0]
    lines = trace_csv(cast(PartResult, body), Units()).splitlines()
    assert lines[0] == "time_s,time_min,core_degC,surface_degC,underside_degC,ambient_degC"
    # a result stored before the point had its name
    old_trace = {k: v for k, v in body["trace"].items() if k != "underside_c"}
    old = {**body, "trace": {**old_trace, "second_surface_c": [20.0, 80.0]}}
    assert trace_csv(cast(PartResult, old), Units()).splitlines()[0] == lines[0]
