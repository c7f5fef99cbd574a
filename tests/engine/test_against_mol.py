"""The engine against the method-of-lines reference: chained steps, ramps, radiation, h(T_s) quenches and
temperature-dependent properties, for plates, two-face plates and bars, at every reported time.

Linear cases (constant h, constant properties) are exact series in the engine: 0.1 K. Nonlinear steps
of plates and bars are marched by the engine's implicit finite-volume scheme
(workers/thermal/march.py): 1 K. Mixed schedules hand the profile from one to the other and back.
The reference is Richardson-extrapolated and its own error estimate must sit well inside the
tolerance, so a failure points at the engine.

A failure message names the point, time, both values and the difference.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pytest

from tests.engine.support import differences, record, reference, run_one, worst
from tests.reference.cases import (
    EUROCODE_STEEL,
    OIL_QUENCH,
    POLYMER_QUENCH,
    bar,
    const_face,
    heat_treat_schedule,
    plate,
)
from workers.thermal.spec import Curve, Face, Material, PartThermal, Shape, Step

# read: EN 1993-1-2 section 3.4, k = 54 - 3.33e-2 T (20-800 C), 27.3 above; cp held at 600 J/kg/K, about
# the mean of the same standard's cp over 20-600 C (computed), density 7850 (from memory)
K_OF_T_STEEL = Material(EUROCODE_STEEL.conductivity, EUROCODE_STEEL.density, Curve.constant(600.0))

SOURCE = "computed with scipy"  # the method-of-lines reference in tests/reference/mol.py
LINEAR_TOL = 0.1
NONLINEAR_TOL = 1.0


@dataclass(frozen=True)
class Case:
    part: PartThermal
    steps: list[Step]
    nonlinear: bool
    samples: int = 120


def linear_schedule() -> list[Step]:
    return [
        Step(3600.0, 860.0, const_face(150.0), ambient_start_c=400.0),
        Step(1800.0, 860.0, const_face(150.0)),
        Step(600.0, 60.0, const_face(2000.0)),
        Step(3600.0, 550.0, const_face(25.0)),
    ]


def alternating(n: int, duration: float) -> list[Step]:
    return [Step(duration, 60.0, const_face(500.0 if i % 2 == 0 else 3000.0)) for i in range(n)]


FURNACE = Face(Curve.constant(20.0), 0.8)
HEARTH = const_face(300.0)  # chosen here: contact with a hearth plate


def reheat_schedule() -> list[Step]:
    """Marched (radiation) and series (constant h) steps in turn: the profile crosses between them."""
    return [
        Step(3600.0, 860.0, FURNACE, ambient_start_c=600.0),
        Step(600.0, 60.0, const_face(2000.0)),
        Step(1800.0, 860.0, FURNACE),
    ]


CASES = {
    # linear: exact series per step
    "plate, ramp and 4 chained steps": Case(plate(0.03), linear_schedule(), False),
    "bar, ramp and 4 chained steps": Case(bar(0.04), linear_schedule(), False),
    "two-face plate, ramp and 3 chained steps": Case(
        plate(0.02),
        [
            Step(
                3600.0,
                860.0,
                const_face(150.0),
                ambient_start_c=500.0,
                second_face=HEARTH,
                second_ambient_c=300.0,
            ),
            Step(600.0, 40.0, const_face(3000.0), second_face=const_face(200.0)),
            Step(1800.0, 200.0, const_face(50.0), second_face=const_face(50.0)),
        ],
        False,
    ),
    "plate, 20 short steps alternating h": Case(
        plate(0.03, initial_c=860.0), alternating(20, 20.0), False, 5
    ),
    "bar, 20 short steps alternating h": Case(bar(0.04, initial_c=860.0), alternating(20, 20.0), False, 5),
    # nonlinear: radiation, h(T_s), k(T) and cp(T)
    "plate, furnace radiation with ramp": Case(
        plate(0.03), [Step(1800.0, 860.0, FURNACE, ambient_start_c=600.0), Step(1800.0, 860.0, FURNACE)], True
    ),
    "bar, furnace radiation": Case(bar(0.04), [Step(3600.0, 860.0, FURNACE)], True),
    "plate, oil quench h(Ts)": Case(
        plate(0.03, initial_c=860.0), [Step(900.0, 60.0, Face(OIL_QUENCH))], True
    ),
    "bar, oil quench h(Ts)": Case(bar(0.04, initial_c=860.0), [Step(900.0, 60.0, Face(OIL_QUENCH))], True),
    "plate, polymer quench h(Ts)": Case(
        plate(0.015, initial_c=850.0), [Step(300.0, 40.0, Face(POLYMER_QUENCH))], True
    ),
    # read: EN 1993-1-2 k(T) of carbon steel, with cp held at its 20-600 C mean (no latent-heat peak)
    "plate, k(T) only, heat then cool": Case(
        plate(0.03, K_OF_T_STEEL),
        [Step(3600.0, 900.0, const_face(100.0)), Step(3600.0, 20.0, const_face(50.0))],
        True,
    ),
    "bar, k(T) only, oil quench h(Ts)": Case(
        bar(0.04, K_OF_T_STEEL, initial_c=860.0), [Step(900.0, 60.0, Face(OIL_QUENCH))], True
    ),
    "plate, k(T) and cp(T), constant h": Case(
        plate(0.03, EUROCODE_STEEL),
        [Step(3600.0, 900.0, const_face(100.0)), Step(3600.0, 20.0, const_face(50.0))],
        True,
    ),
    "plate, k(T) and cp(T), full schedule": Case(plate(0.03, EUROCODE_STEEL), heat_treat_schedule(), True),
    "bar, k(T) and cp(T), full schedule": Case(bar(0.04, EUROCODE_STEEL), heat_treat_schedule(), True),
    "plate, radiant heat, constant-h quench, radiant reheat": Case(plate(0.03), reheat_schedule(), True),
    "bar, radiant heat, constant-h quench, radiant reheat": Case(bar(0.04), reheat_schedule(), True),
    "two-face plate, radiant top, hearth, one-sided quench": Case(
        plate(0.025, EUROCODE_STEEL),
        [
            Step(3600.0, 860.0, FURNACE, ambient_start_c=500.0, second_face=HEARTH, second_ambient_c=820.0),
            Step(300.0, 30.0, Face(POLYMER_QUENCH), second_face=const_face(30.0), second_ambient_c=30.0),
        ],
        True,
    ),
    # A step without its own lower face uses the main face's law on both faces (README, "The batch
    # file"): a plate heated on a hearth and then quenched all round, marched and in series.
    "two-face plate, radiant heat on a hearth, then an oil quench without a lower face": Case(
        plate(0.025, EUROCODE_STEEL),
        [
            Step(3600.0, 860.0, FURNACE, ambient_start_c=500.0, second_face=HEARTH, second_ambient_c=820.0),
            Step(600.0, 60.0, Face(OIL_QUENCH)),
        ],
        True,
    ),
    "two-face plate, oil quench without a lower face between radiant heats on a hearth": Case(
        plate(0.025, EUROCODE_STEEL),
        [
            Step(1800.0, 860.0, FURNACE, second_face=HEARTH, second_ambient_c=820.0),
            Step(300.0, 60.0, Face(OIL_QUENCH)),
            Step(1800.0, 860.0, FURNACE, ambient_start_c=500.0, second_face=HEARTH),
        ],
        True,
    ),
    "two-face plate, series steps with and without a lower face": Case(
        plate(0.025),
        [
            Step(3600.0, 860.0, const_face(150.0), ambient_start_c=500.0, second_face=HEARTH),
            Step(600.0, 40.0, const_face(3000.0)),
            Step(1800.0, 860.0, const_face(150.0), second_face=HEARTH, second_ambient_c=300.0),
            Step(600.0, 40.0, const_face(3000.0), ambient_start_c=200.0),
        ],
        False,
    ),
    "two-face plate, series and marched steps with and without a lower face": Case(
        plate(0.025),
        [
            Step(1800.0, 860.0, FURNACE, ambient_start_c=500.0),
            Step(1800.0, 860.0, const_face(150.0), second_face=HEARTH, second_ambient_c=820.0),
            Step(600.0, 60.0, Face(OIL_QUENCH)),
            Step(600.0, 60.0, const_face(500.0), second_face=const_face(2000.0)),
            Step(900.0, 550.0, const_face(25.0)),
        ],
        True,
    ),
}


@pytest.mark.parametrize("name", list(CASES))
def test_engine_matches_method_of_lines(name: str) -> None:
    case = CASES[name]
    tr = run_one(case.part, case.steps, samples=case.samples)
    ref = reference(case.part, case.steps, tr.time_s, nonlinear=case.nonlinear)
    tol = NONLINEAR_TOL if case.nonlinear else LINEAR_TOL
    # error_k estimates the finer grid alone; the extrapolated values are at least five times closer
    # (tests/reference/test_mol.py::test_richardson_gains_an_order), so the reference is within tol / 10
    assert ref.error_k is not None and ref.error_k.max() < tol / 2, "reference not converged"
    diffs = differences(tr, ref, case.part)
    got = max(float(np.max(np.abs(d))) for d in diffs.values())
    # computed with scipy: fine-grid method of lines (solve_ivp, BDF), Richardson-extrapolated
    record(f"MOL: {name}", SOURCE, tol, got)
    assert got < tol, worst(diffs, tr, ref)


# Blocks and short cylinders with nonlinear steps are marched on tensor grids. Far from its edges a
# block is a plate and a long short cylinder a bar: at the centre and the middle of the largest face
# (the skin at mid-length) within the step's diffusion length (about 0.1 m in 600 s) the edges cannot
# be felt, so the 1-D reference applies.
SOLIDS = {
    "block 60 x 1000 x 1000 mm, k(T) and cp(T), oil quench": (
        PartThermal(Shape("block", (0.03, 0.5, 0.5)), EUROCODE_STEEL, 860.0),
        plate(0.03, EUROCODE_STEEL, initial_c=860.0),
    ),
    "short cylinder 80 mm x 1000 mm, k(T) and cp(T), oil quench": (
        PartThermal(Shape("cylinder", (0.04, 0.5)), EUROCODE_STEEL, 860.0),
        bar(0.04, EUROCODE_STEEL, initial_c=860.0),
    ),
}


@pytest.mark.parametrize("name", list(SOLIDS))
def test_solid_far_from_its_edges_matches_the_1d_reference(name: str) -> None:
    solid, flat = SOLIDS[name]
    quench = [Step(600.0, 60.0, Face(OIL_QUENCH))]
    tr = run_one(solid, quench, samples=60)
    ref = reference(flat, quench, tr.time_s, nonlinear=True)
    assert ref.error_k is not None and ref.error_k.max() < NONLINEAR_TOL / 2, "reference not converged"
    got = max(
        float(np.max(np.abs(tr.core_c - ref.core_c))), float(np.max(np.abs(tr.surface_c - ref.surface_c)))
    )
    # computed with scipy: fine-grid method of lines (solve_ivp, BDF), Richardson-extrapolated
    record(f"MOL (1-D limit): {name}", SOURCE, NONLINEAR_TOL, got)
    assert got < NONLINEAR_TOL, f"{got:.3f} K off the 1-D reference"
