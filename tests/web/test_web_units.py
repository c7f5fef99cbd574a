"""Small pieces of the review pages that need no browser: display units, redirects, CSV, comparisons."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import cast

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

import pytest

from models.results import PartResult
from scheduler.api.schemas import ComparePart, PartFlags
from scheduler.web.pages import _safe_next
from scheduler.web.units import Units
from scheduler.web.views import compare_row, trace_csv


def test_units_round_trip_and_convert() -> None:
    assert Units.parse(None) == Units("C", "mm")
    assert Units.parse("F-in").cookie() == "F-in"
    assert Units.parse("K-ft") == Units("C", "mm")  # anything unknown falls back to the defaults
    f = Units("F", "in")
    assert f.temp(100.0) == pytest.approx(212.0) and f.temp(None) is None
    assert f.delta(10.0) == pytest.approx(18.0)
    assert f.fmt_temp(845.0) == "1553 °F"
    assert f.fmt_length(0.0254) == "1.00 in"
    assert Units().fmt_length(0.06) == "60 mm" and Units().fmt_length(0.005) == "5.0 mm"


@pytest.mark.parametrize(
    ("target", "expected"),
    [
        ("/ui/batches/3", "/ui/batches/3"),
        ("https://elsewhere.example/ui/x", "/ui/batches"),
        ("//elsewhere.example/ui/", "/ui/batches"),
        ("/docs", "/ui/batches"),
        (None, "/ui/batches"),
    ],
)
def test_sign_in_only_returns_to_these_pages(target: str | None, expected: str) -> None:
    assert _safe_next(target) == expected


def test_trace_csv_in_display_units() -> None:
    body = {
        "trace": {
            "time_s": [0.0, 60.0],
            "core_c": [20.0, 100.0],
            "surface_c": [20.0, None],
            "ambient_c": [860.0, 860.0],
        }
    }
    lines = trace_csv(cast(PartResult, body), Units("F", "mm")).splitlines()
    assert lines[0] == "time_s,time_min,core_degF,surface_degF,ambient_degF"
    assert lines[2] == "60.0,1.0,212.0,,1580.0"


def _flag(step: str) -> dict[str, str]:
    return {"step": step, "at": "core", "target": "hold_above", "margin": "-1 min"}


def test_compare_row_names_flags_cleared_and_gained() -> None:
    part = ComparePart(
        id="P-1",
        before=PartFlags(flagged=True, flags=[_flag("soak")]),
        after=PartFlags(flagged=True, flags=[_flag("temper")]),
        change="still-flagged",
    )
    row = compare_row(part)
    assert [f["step"] for f in row["cleared"]] == ["soak"]
    assert [f["step"] for f in row["gained"]] == ["temper"]
    pending = compare_row(part.model_copy(update={"after": PartFlags(flagged=None, flags=[])}))
    assert pending["cleared"] == [] and pending["gained"] == []


def test_temperature_margins_follow_the_display_unit() -> None:
    check = {"margin": "+40 K", "margin_value": 40.0, "margin_unit": "K"}
    assert Units("F", "mm").fmt_margin(check) == "+72 °F"
    assert Units("C", "mm").fmt_margin(check) == "+40 K"
    assert (
        Units("F", "mm").fmt_margin({"margin": "-10 min", "margin_value": -600.0, "margin_unit": "s"})
        == "-10 min"
    )
