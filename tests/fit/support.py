"""Records made by the engine itself for the fit checks: known exchange, a thermocouple lag, noise."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from workers.fit import Reading, _lagged, point_curve
from workers.thermal import Curve, Material, PartThermal, Shape, Step, simulate
from workers.thermal.spec import FloatArray

STEEL = Material(Curve.constant(40.0), 7850.0, Curve.constant(500.0))  # constant properties: exact series


def plate(thickness_m: float, material: Material = STEEL, initial_c: float = 20.0) -> PartThermal:
    return PartThermal(Shape("plate", (thickness_m / 2,)), material, initial_c)


def bar(diameter_m: float, material: Material = STEEL, initial_c: float = 20.0) -> PartThermal:
    return PartThermal(Shape("bar", (diameter_m / 2,)), material, initial_c)


def engine_readings(
    parts: Sequence[PartThermal],
    steps: Sequence[Step],
    places: Sequence[tuple[int, str, float]],
    times: FloatArray,
    *,
    lag_s: float,
    noise_k: float,
    seed: int,
    samples: int = 3000,
) -> list[Reading]:
    """Readings at ``times`` of thermocouples at ``places`` (part, where, xi), lagged and noisy."""
    traces = simulate(parts, steps, samples_per_step=samples)
    rng = np.random.default_rng(seed)
    out = []
    for i, where, xi in places:
        probe = Reading(i, where, xi, times, times)  # type: ignore[arg-type]
        y = _lagged(traces[i].time_s, point_curve(traces[i], parts[i], probe), lag_s)
        temp = np.interp(times, traces[i].time_s, y) + rng.normal(0.0, noise_k, times.size)
        out.append(Reading(i, where, xi, times, temp))  # type: ignore[arg-type]
    return out
