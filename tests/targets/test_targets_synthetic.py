"""Target checks on hand-built traces whose crossings and extremes can be worked out on paper."""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
import pytest

from workers.targets import (
    Target,
    evaluate,
    facts_texts,
    first_below,
    format_duration,
    longest_run_above,
    tempering_parameter,
)
from workers.thermal import Trace
from workers.wording import Texts

KELVIN = 273.15


def trace(
    time_s: Sequence[float], steps: list[int], core: Sequence[float], surface: Sequence[float] | None = None
) -> Trace:
    """A trace with the given samples; the first sample of each step after the first is its end."""
    t = np.array(time_s, dtype=float)
    core_a = np.array(core, dtype=float)
    surf = core_a if surface is None else np.array(surface, dtype=float)
    zeros = np.zeros_like(t)
    return Trace(
        time_s=t,
        step_index=np.array(steps, dtype=np.int64),
        core_c=core_a,
        surface_c=surf,
        ambient_c=zeros,
        bound_k=zeros,
        mean_c=core_a,
        heat_in_j_m3=zeros,
    )


def hold(limit: float, for_s: float, step_index: int = 0, at: str = "core") -> Target:
    return Target(f"s{step_index}", step_index, "hold_above", at, limit, for_s)  # type: ignore[arg-type]


# -- hold_above ---------------------------------------------------------------------------------------


def test_hold_clock_starts_at_the_interpolated_crossing() -> None:
    # 0 -> 1000 degC linearly over 1000 s, then flat to 3000 s: 500 degC is reached at 500 s (by hand)
    tr = trace([0, 1000, 2000, 3000], [0, 0, 0, 0], [0, 1000, 1000, 1000])
    check = evaluate(hold(500.0, 1800.0), tr)
    assert check.passed
    assert check.margin_value == pytest.approx(2500.0 - 1800.0)
    assert "from 8.3 min" in check.achieved  # 500 s
    assert check.margin == "+11.7 min"


def test_hold_takes_the_longest_continuous_run_not_the_sum() -> None:
    # above 600 from 150 s to 250 s (100 s), dips, above again from 450 s to 700 s (250 s): by hand
    t = [0, 100, 200, 300, 400, 500, 600, 700]
    core = [500, 550, 650, 550, 550, 650, 700, 600]
    held, start = longest_run_above(np.array(t, float), np.array(core, float), 600.0)
    assert held == pytest.approx(250.0)
    assert start == pytest.approx(450.0)
    check = evaluate(hold(600.0, 300.0), trace(t, [0] * 8, core))
    assert not check.passed
    assert check.margin_value == pytest.approx(-50.0)
    assert check.message == "core held at or above 600 degC for 4.2 min of the required 5 min"


def test_hold_at_exactly_the_limit_counts() -> None:
    held, start = longest_run_above(np.array([0.0, 10.0, 20.0]), np.array([845.0, 845.0, 845.0]), 845.0)
    assert held == 20.0
    assert start == 0.0


def test_hold_never_reached_reports_the_peak_and_misses_by_the_whole_time() -> None:
    tr = trace([0, 600, 1200], [0, 0, 0], [20, 700, 812.4])
    check = evaluate(hold(845.0, 1800.0), tr)
    assert not check.passed
    assert check.margin_value == -1800.0
    assert "never reached 845 degC" in check.message
    assert "peak 812.4 degC" in check.message


def test_hold_counts_only_inside_its_step() -> None:
    # step 0 is hot throughout (0-1000 s); step 1 starts hot at its first sample (the boundary at 1000 s)
    # and drops below at 1500 s, so step 1 sees 500 s, not 1500 s
    tr = trace([0, 1000, 1400, 1600, 2000], [0, 0, 1, 1, 1], [900, 900, 900, 800, 800])
    check = evaluate(hold(850.0, 60.0, step_index=1), tr)
    assert check.margin_value == pytest.approx(500.0 - 60.0)
    assert "from 0 s into s1" in check.achieved


# -- stay_below, fall_below, max_difference -----------------------------------------------------------


def test_stay_below_uses_the_peak_within_the_step() -> None:
    tr = trace([0, 100, 200, 300], [0, 0, 1, 1], [20, 905, 880, 870], surface=[20, 905, 880, 870])
    over = evaluate(Target("s0", 0, "stay_below", "surface", 900.0), tr)
    assert not over.passed
    assert over.margin == "-5 K"
    assert over.message == "surface peaked at 905 degC at 100 s into s0, 5 K over the 900 degC limit"
    # step 1 includes its start sample (905 at 100 s is the end of step 0 and the start of step 1)
    inside = evaluate(Target("s1", 1, "stay_below", "surface", 910.0), tr)
    assert inside.passed and inside.margin_value == pytest.approx(5.0)


def test_fall_below_interpolates_the_crossing() -> None:
    # 800 -> 0 degC linearly over 800 s: below 200 degC after 600 s (by hand)
    t, core = np.linspace(0, 800, 9), np.linspace(800, 0, 9)
    assert first_below(t, core, 200.0) == pytest.approx(600.0)
    assert first_below(t, core, 250.0) == pytest.approx(550.0)
    tr = trace(list(t), [0] * 9, list(core))
    late = evaluate(Target("s0", 0, "fall_below", "core", 200.0, 300.0), tr)
    assert not late.passed
    assert late.margin_value == pytest.approx(-300.0)
    assert late.message == "core fell below 200 degC only after 10 min, 5 min allowed"
    in_time = evaluate(Target("s0", 0, "fall_below", "core", 200.0, 660.0), tr)
    assert in_time.passed and in_time.margin_value == pytest.approx(60.0)


def test_fall_below_already_below_at_the_step_start() -> None:
    assert first_below(np.array([0.0, 10.0]), np.array([150.0, 100.0]), 200.0) == 0.0


def test_fall_below_never_reports_every_text_at_the_time_allowed() -> None:
    # 500 degC when the 5 min allowed run out, 400 degC at the step's end: every text says 5 min
    tr = trace([0, 300, 600], [0, 0, 0], [800, 500, 400])
    check = evaluate(Target("s0", 0, "fall_below", "core", 200.0, 300.0), tr)
    assert not check.passed
    assert check.margin_unit == "K"
    assert check.margin_value == pytest.approx(200.0 - 500.0)
    assert check.achieved == "still 500 degC at 5 min, the time allowed"
    assert check.margin == "-300 K"
    assert check.message == "core was still 500 degC at 5 min, the time allowed, 300 K above 200 degC"
    assert "400" not in check.achieved + check.message


def test_fall_below_never_in_a_step_shorter_than_the_time_allowed_speaks_of_its_end() -> None:
    tr = trace([0, 300, 600], [0, 0, 0], [800, 500, 400])
    check = evaluate(Target("s0", 0, "fall_below", "core", 200.0, 900.0), tr)
    assert check.achieved == "still 400 degC at the end of s0 (10 min), before the 15 min allowed"
    assert check.margin_value == pytest.approx(-200.0) and "400 degC at the end of s0" in check.message


def test_max_difference_takes_the_absolute_largest_either_way() -> None:
    # heating: surface 120 K above the core; quench: surface 300 K below it (by hand)
    tr = trace([0, 1, 2, 3], [0, 0, 0, 0], [20, 500, 800, 600], surface=[140, 600, 800, 300])
    check = evaluate(Target("s0", 0, "max_difference", "surface", 250.0), tr)
    assert not check.passed
    assert check.required == "difference between core and surface <= 250 K"
    assert check.achieved == "difference between core and surface up to 300 K, at 3 s into s0"
    assert check.margin_value == pytest.approx(-50.0)
    assert (
        check.message
        == "difference between core and surface reached 300 K at 3 s into s0, over the 250 K limit"
    )


def test_corner_needs_a_corner() -> None:
    with pytest.raises(ValueError, match="corner"):
        evaluate(Target("s0", 0, "stay_below", "corner", 900.0), trace([0, 1], [0, 0], [20, 30]))


# -- Hollomon-Jaffe -----------------------------------------------------------------------------------


def test_tempering_parameter_isothermal_equals_the_formula() -> None:
    # read: Hollomon-Jaffe P = T (C + log10 t), T in kelvin, t in hours (heat-treating references)
    t = np.linspace(0.0, 2 * 3600.0, 121)
    temp = np.full_like(t, 600.0)
    expected = (600.0 + KELVIN) * (20.0 + math.log10(2.0))
    assert tempering_parameter(t, temp, 20.0) == pytest.approx(expected, rel=1e-12)


def test_tempering_parameter_two_holds_by_equivalent_time() -> None:
    # by hand: 1 h at 500 degC gives P1 = 773.15 (C + 0); at 600 degC that is t_eq = 10^(P1/873.15 - C) h;
    # then 2 h at 600 degC: P = 873.15 (C + log10(t_eq + 2)). The history is stepwise so the samples
    # carry the step exactly (interval means equal the hold temperatures).
    c = 20.0
    t = np.array([0.0, 1800.0, 3600.0, 3600.0, 7200.0, 10800.0])
    temp = np.array([500.0, 500.0, 500.0, 600.0, 600.0, 600.0])
    p1 = (500 + KELVIN) * c
    t_eq = 10 ** (p1 / (600 + KELVIN) - c)
    expected = (600 + KELVIN) * (c + math.log10(t_eq + 2.0))
    assert tempering_parameter(t, temp, c) == pytest.approx(expected, rel=1e-12)


def test_a_cold_lead_in_adds_almost_nothing() -> None:
    # an hour at 20 degC before 2 h at 600 degC: the cold hour is worth a negligible time at 600 (by hand)
    t = np.array([0.0, 3600.0, 3600.0, 10800.0])
    temp = np.array([20.0, 20.0, 600.0, 600.0])
    expected = (600 + KELVIN) * (20 + math.log10(2.0))
    assert tempering_parameter(t, temp, 20.0) == pytest.approx(expected, rel=1e-9)


def test_temper_targets_min_and_max() -> None:
    t = list(np.linspace(0.0, 3600.0, 5))
    tr = trace(t, [0] * 5, [600.0] * 5)
    p = (600 + KELVIN) * 20.0  # 1 h: log10 1 = 0
    low = evaluate(Target("s0", 0, "temper_parameter_min", "core", p + 100.0, constant=20.0), tr)
    assert not low.passed and low.margin_value == pytest.approx(-100.0)
    assert "below the minimum" in low.message
    high = evaluate(Target("s0", 0, "temper_parameter_max", "core", p + 100.0, constant=20.0), tr)
    assert high.passed and high.margin_value == pytest.approx(100.0)


# -- texts --------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("seconds", "text"),
    [(45, "45 s"), (750, "12.5 min"), (1800, "30 min"), (7425, "2 h 04 min"), (-300, "-5 min")],
)
def test_durations_read_naturally(seconds: float, text: str) -> None:
    assert format_duration(seconds) == text


# -- the same outcome in degF ---------------------------------------------------------------------------


def test_every_text_follows_the_readers_temperature_unit() -> None:
    tr = trace([0, 300, 600], [0, 0, 0], [800, 500, 400], surface=[700, 400, 300])
    fall = evaluate(Target("s0", 0, "fall_below", "core", 200.0, 300.0), tr)
    texts = facts_texts(fall.flag_dict(), "degF")
    # 200 degC = 392 degF, 500 degC = 932 degF, a 300 K gap is 540 degF (by definition of the scales)
    assert texts.required == "< 392 degF within 5 min"
    assert texts.achieved == "still 932 degF at 5 min, the time allowed"
    assert texts.margin == "-540 degF"
    assert "degC" not in texts.required + texts.achieved + texts.margin + texts.message
    gap = evaluate(Target("s0", 0, "max_difference", "surface", 50.0), tr)
    assert facts_texts(gap.as_dict(), "degF").required == "difference between core and surface <= 90 degF"
    assert facts_texts(gap.as_dict(), "degC") == Texts(gap.required, gap.achieved, gap.margin, gap.message)


def test_a_result_stored_without_facts_keeps_its_own_texts() -> None:
    tr = trace([0, 300, 600], [0, 0, 0], [800, 500, 400])
    body = evaluate(Target("s0", 0, "stay_below", "core", 900.0), tr).flag_dict()
    del body["facts"]
    assert facts_texts(body, "degF").required == "<= 900 degC"
