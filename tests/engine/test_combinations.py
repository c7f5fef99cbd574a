"""Every combination of options a batch file can give a step, on every shape, through the whole path
from the file's fields (``models``) to the engine (``workers.convert``, ``workers.thermal``).

A step's options: a ramp or not; ``htc`` or ``medium``; an ``emissivity`` or not (a medium may bring
its own); and for plates a ``lower_face`` or not, itself with ``htc`` or ``medium``, an emissivity or
not and its own ambient or not. The part's steel is constant (inline) or temperature-dependent (the
catalog's 4140). Steps with and without a lower face alternate in one schedule, which is how a plate
on a hearth is heated and then quenched.

- Plates and bars are compared with the method-of-lines reference (tests/reference/mol.py) at every
  reported time.
- Blocks and short cylinders, which that reference does not cover, must stay finite, keep within the
  range of their initial and ambient temperatures up to their own reported bound, and, for the constant
  steel, store exactly the heat that crossed their faces.
"""

from __future__ import annotations

import itertools
from typing import Any

import numpy as np
import pytest

from models import parse_batch
from tests.engine.support import record, reference, worst
from workers.convert import engine_inputs
from workers.thermal import Trace, simulate
from workers.thermal.spec import PartThermal, Step

SAMPLES = 8
SOURCE = "computed with scipy"  # the method-of-lines reference in tests/reference/mol.py
# measured at most 0.24 K on the plates and bars below (margin 2x)
TOL_K = 0.5

# inline steel: read, Incropera Table A.1, 1/2Cr-1/4Mo-Si at 300 K
CONSTANT_STEEL = {"conductivity": "37.7 W/m/K", "density": "7822 kg/m^3", "specific_heat": "444 J/kg/K"}
STEELS = {"constant": CONSTANT_STEEL, "4140": "4140"}

# Steps alternate between heating (furnace) and cooling (quench bath) so that every option meets
# real temperature changes; the values are a scenario of our own.
HEAT = {"ambient": "860 degC", "ambient_start": "500 degC", "htc": "150 W/m^2/K", "medium": "furnace"}
COOL = {"ambient": "60 degC", "ambient_start": "200 degC", "htc": "2000 W/m^2/K", "medium": "oil-agitated"}
LOWER = {
    True: {"htc": "300 W/m^2/K", "medium": "air-still", "ambient": "700 degC"},
    False: {"htc": "200 W/m^2/K", "medium": "water", "ambient": "30 degC"},
}
DURATION = {True: "15 min", False: "5 min"}
SHORT = {True: "5 min", False: "2 min"}  # solids: every option still meets a change, at less cost

LOWER_OPTIONS: list[tuple[str, bool, bool] | None] = [
    None,
    *itertools.product(["htc", "medium"], [False, True], [False, True]),
]
STEP_OPTIONS = list(itertools.product([False, True], ["htc", "medium"], [False, True]))


def step_doc(
    name: str, heating: bool, ramp: bool, law: str, emissive: bool, lower: Any, short: bool = False
) -> dict[str, Any]:
    side = HEAT if heating else COOL
    duration = (SHORT if short else DURATION)[heating]
    doc: dict[str, Any] = {"name": name, "duration": duration, "ambient": side["ambient"]}
    if ramp:
        doc["ambient_start"] = side["ambient_start"]
    doc[law] = side[law]
    if emissive:
        doc["emissivity"] = 0.7
    if lower is not None:
        low_law, low_emissive, low_ambient = lower
        values = LOWER[heating]
        face: dict[str, Any] = {low_law: values[low_law]}
        if low_emissive:
            face["emissivity"] = 0.5
        if low_ambient:
            face["ambient"] = values["ambient"]
        doc["lower_face"] = face
    return doc


def schedules(with_lower: bool, short: bool = False) -> list[list[dict[str, Any]]]:
    """Schedules that together hold every step combination once, lower-face options varying fastest."""
    lowers = LOWER_OPTIONS if with_lower else [None]
    combos = [(*s, low) for s in STEP_OPTIONS for low in lowers]
    size = len(lowers) if with_lower else len(combos)
    out = []
    for c0 in range(0, len(combos), size):
        chunk = combos[c0 : c0 + size]
        out.append([step_doc(f"s{i}", i % 2 == 0, *combo, short=short) for i, combo in enumerate(chunk)])
    return out


SIZES = {
    "plate": {"thickness": "30 mm"},
    "bar": {"diameter": "50 mm"},
    "block": {"thickness": "30 mm", "width": "40 mm", "length": "50 mm"},
    "cylinder": {"diameter": "40 mm", "length": "50 mm"},
}


def run(shape: str, steel: str, schedule: list[dict[str, Any]]) -> tuple[PartThermal, list[Step], Trace]:
    part = {"id": "P", "shape": shape, "material": STEELS[steel], "initial": "20 degC", **SIZES[shape]}
    spec = parse_batch({"batch": "combinations", "schedule": schedule, "parts": [part]})
    parts, steps = engine_inputs(spec)
    (trace,) = simulate(parts, steps, samples_per_step=SAMPLES)
    return parts[0], steps, trace


CASES = [
    (shape, steel, k, schedule)
    for steel in STEELS
    for shape, with_lower in (("plate", True), ("plate", False), ("bar", False))
    for k, schedule in enumerate(schedules(with_lower))
]


@pytest.mark.parametrize(
    ("shape", "steel", "k", "schedule"),
    CASES,
    ids=[
        f"{s}-{m}-{'lower' if any('lower_face' in d for d in sch) else 'one face'}-{k}"
        for s, m, k, sch in CASES
    ],
)
def test_every_step_combination_matches_the_reference(
    shape: str, steel: str, k: int, schedule: list[dict[str, Any]]
) -> None:
    part, steps, tr = run(shape, steel, schedule)
    ref = reference(part, steps, tr.time_s, nonlinear=True)
    assert ref.error_k is not None and ref.error_k.max() < TOL_K / 2, "reference not converged"
    diffs = {
        n: np.asarray(getattr(tr, n) - getattr(ref, n), dtype=float)
        for n in ("core_c", "surface_c", "mean_c", "second_surface_c")
        if getattr(tr, n) is not None and getattr(ref, n) is not None
    }
    got = max(float(np.max(np.abs(d))) for d in diffs.values())
    record(f"combinations: {shape} {steel} #{k}", SOURCE, TOL_K, got)
    assert got < TOL_K, worst(diffs, tr, ref)


def span(part: PartThermal, steps: list[Step]) -> tuple[float, float]:
    values = [part.initial_c]
    for s in steps:
        values += [v for v in (s.ambient_c, s.ambient_start_c, s.second_ambient_c) if v is not None]
    return min(values), max(values)


@pytest.mark.parametrize("steel", list(STEELS))
@pytest.mark.parametrize("shape", ["block", "cylinder"])
def test_every_step_combination_on_solids_is_finite_bounded_and_conserves_heat(
    shape: str, steel: str
) -> None:
    (schedule,) = schedules(False, short=True)
    part, steps, tr = run(shape, steel, schedule)
    reported = [tr.core_c, tr.surface_c, tr.mean_c, tr.corner_c, tr.heat_in_j_m3, tr.bound_k]
    assert all(v is not None and np.all(np.isfinite(v)) for v in reported)
    lo, hi = span(part, steps)
    for values in (tr.core_c, tr.surface_c, tr.mean_c, tr.corner_c):
        assert values is not None
        assert np.all(values >= lo - tr.bound_k) and np.all(values <= hi + tr.bound_k)
    if steel == "constant":
        # energy balance: the heat in through the faces is the rise of the mean temperature times rho c
        rc = part.material.density * part.material.specific_heat.value[0]
        stored = rc * (tr.mean_c - part.initial_c)
        assert np.max(np.abs(tr.heat_in_j_m3 - stored)) <= 1e-6 * np.max(np.abs(stored))
