"""Where a missed target is missed: the spans the targets module stores with each check, worked out by
hand on traces whose samples are chosen here (linear between samples, times in seconds from zero)."""

from __future__ import annotations

from workers.targets import Target, evaluate

from .test_targets_synthetic import hold, trace

# Two steps: 0-300 s heating, 300-600 s a second step; the boundary sample at 300 s ends step 0.
TIMES = [0.0, 100.0, 200.0, 300.0, 400.0, 500.0, 600.0]
STEPS = [0, 0, 0, 0, 1, 1, 1]


def test_a_passed_check_has_no_spans() -> None:
    check = evaluate(hold(500.0, 60.0), trace(TIMES, STEPS, [20, 600, 600, 600, 600, 600, 600]))
    assert check.passed and check.misses == () and check.as_dict()["misses"] == []


def test_a_missed_hold_spans_the_samples_below_its_temperature() -> None:
    # below 845 at 0, 100 and 300 s; above only at 200 s: a 0 s run, the hold of 60 s is missed
    core = [20, 700, 850, 800, 0, 0, 0]
    check = evaluate(hold(845.0, 60.0), trace(TIMES, STEPS, core))
    assert not check.passed
    assert check.misses == ((0.0, 100.0), (300.0, 300.0))
    assert check.limit == 845.0


def test_a_hold_that_never_dips_but_is_too_short_spans_its_step() -> None:
    # at or above 600 the whole of step 0 (300 s), 400 s required: no sample is below, so the step
    check = evaluate(hold(600.0, 400.0), trace(TIMES, STEPS, [600, 650, 650, 650, 0, 0, 0]))
    assert not check.passed and check.misses == ((0.0, 300.0),)


def test_stay_below_spans_the_samples_over_the_limit_in_its_step_only() -> None:
    # step 1 (its start sample at 300 s included) peaks over 900 at 400-500 s; step 0 is not looked at
    core = [950, 950, 950, 850, 920, 910, 880]
    target = Target("s1", 1, "stay_below", "core", 900.0)
    check = evaluate(target, trace(TIMES, STEPS, core))
    assert not check.passed and check.misses == ((400.0, 500.0),)


def test_fall_below_spans_from_the_time_allowed_while_still_too_hot() -> None:
    # step 1 starts at 300 s; 150 s allowed, so from 450 s on: still above 200 at 500 s, below at 600 s
    core = [850, 850, 850, 850, 600, 300, 150]
    target = Target("s1", 1, "fall_below", "core", 200.0, 150.0)
    check = evaluate(target, trace(TIMES, STEPS, core))
    assert not check.passed and check.misses == ((500.0, 500.0),)


def test_a_difference_or_a_temper_miss_is_no_temperature_span() -> None:
    core, surface = [20, 20, 20, 20, 20, 20, 20], [20, 400, 20, 20, 20, 20, 20]
    target = Target("s0", 0, "max_difference", "surface", 100.0)
    check = evaluate(target, trace(TIMES, STEPS, core, surface))
    assert not check.passed and check.misses == ()
