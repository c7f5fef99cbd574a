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
from workers.wording import describe


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


def test_a_margin_alone_reads_as_the_margin_of_the_texts() -> None:
    """The report says only each check's margin (``Units.margin``, from its number and unit); it must
    read exactly as the margin of the four texts the other pages say, for every kind of target, passed
    or missed, in degC and degF. Limits chosen around the trace of ``_trace`` (800 -> 500 -> 400 degC)."""
    trace = _trace()
    targets = [
        Target("quench", 0, "hold_above", "core", 450.0, 200.0),  # held 450 s of 200 s needed
        Target("quench", 0, "hold_above", "core", 450.0, 900.0),  # missed: a time margin below zero
        Target("quench", 0, "hold_above", "core", 900.0, 60.0),  # never reached
        Target("quench", 0, "stay_below", "surface", 750.0),
        Target("quench", 0, "stay_below", "surface", 650.0),
        Target("quench", 0, "fall_below", "core", 600.0, 400.0),  # fell in time: a time margin
        Target("quench", 0, "fall_below", "core", 200.0, 300.0),  # never fell: a temperature margin
        Target("quench", 0, "max_difference", "surface", 150.0),
        Target("quench", 0, "max_difference", "surface", 50.0),
        Target("quench", 0, "temper_parameter_min", "core", 10000.0),
        Target("quench", 0, "temper_parameter_max", "core", 10000.0),
    ]
    kinds = set()
    for target in targets:
        check = dict(evaluate(target, trace).as_dict())
        kinds.add((target.kind, check["margin_unit"]))
        for units in (Units("C", "mm"), Units("F", "in")):
            assert units.margin(check) == units.texts(check).margin, (target, units)
    assert {unit for _, unit in kinds} == {"s", "K", ""}
    # Phase targets, their texts said from facts as a quench step's checks store them (invented numbers).
    phases = {"hv": 520.0, "hrc": 50.6, "martensite": 0.82, "bainite": 0.15, "ferrite_pearlite": 0.03}
    phases |= {"austenite": 0.0, "rate_k_s": 35.0, "temp_c": 60.0, "ms_c": 330.0, "unsettled": 0.0}
    for kind, limit, value, unit_name in (
        ("hardness_min", 52.0, -1.4, "HRC"),
        ("martensite_min", 0.9, -8.0, "%"),
        ("hardness_min", 45.0, 0.0, "HRC"),
    ):
        facts = {"limit": limit, **phases} | ({"unsettled": 1.0} if limit == 45.0 else {})
        said = describe(kind, "core", "quench", facts)
        body: dict[str, Any] = {"target": kind, "at": "core", "step": "quench", "margin": said.margin}
        body |= {"margin_value": value, "margin_unit": unit_name, "facts": facts}
        for units in (Units("C", "mm"), Units("F", "in")):
            assert units.margin(body) == units.texts(body).margin, (kind, units)
    old = {"margin": "-5 K", "margin_value": -5.0, "margin_unit": "K"}  # stored before facts
    assert Units("F", "mm").margin(old) == Units("F", "mm").texts(old).margin == "-9 °F"
