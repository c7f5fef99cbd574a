"""Blocks and short cylinders against products of 1-D runs of the same engine.

After one step change of ambient from a uniform start, with the same h on every face and constant
properties, the excess ratio of a block is the product of three plates' and that of a short cylinder the
product of a bar's and a plate's (separation of variables). Each point of the 3-D or 2-D part is the
product of the 1-D values at its coordinates.
"""

from __future__ import annotations

import numpy as np
import pytest

from tests.engine.support import record, run_one
from tests.reference.cases import CR_MO_STEEL, const_face
from workers.thermal.spec import PartThermal, Shape, ShapeName, Step, Trace

T0, AMB, H, DUR = 850.0, 60.0, 600.0, 1800.0
SOURCE = "from memory"  # product solutions for multidimensional conduction (separation of variables)


def ratios(tr: Trace) -> dict[str, np.ndarray]:
    return {name: (getattr(tr, name) - AMB) / (T0 - AMB) for name in ("core_c", "surface_c", "mean_c")}


def one_d(kind: ShapeName, size: float) -> tuple[dict[str, np.ndarray], np.ndarray]:
    part = PartThermal(Shape(kind, (size,)), CR_MO_STEEL, T0)
    tr = run_one(part, [Step(DUR, AMB, const_face(H))], samples=60)
    return ratios(tr), tr.bound_k


def check(tr: Trace, want: dict[str, np.ndarray], bounds: np.ndarray, label: str) -> None:
    allow = tr.bound_k + bounds + 1e-9 * (T0 - AMB)
    worst = 0.0
    for name, ratio in want.items():
        got = getattr(tr, name)
        assert got is not None, name
        diff = np.abs(got - (AMB + (T0 - AMB) * ratio))
        worst = max(worst, float(diff.max()))
        assert np.all(diff <= allow), (
            f"{name}: {diff.max():.3e} K off the product at t = {tr.time_s[np.argmax(diff)]} s"
        )
    record(f"product rule: {label}", SOURCE, float(allow.max()), worst)


@pytest.mark.parametrize("half", [(0.05, 0.02, 0.08), (0.03, 0.03, 0.03)], ids=["unsorted sizes", "cube"])
def test_block_is_product_of_three_plates(half: tuple[float, float, float]) -> None:
    tr = run_one(
        PartThermal(Shape("block", half), CR_MO_STEEL, T0), [Step(DUR, AMB, const_face(H))], samples=60
    )
    thin, mid, thick = (one_d("plate", s) for s in sorted(half))
    want = {
        "core_c": thin[0]["core_c"] * mid[0]["core_c"] * thick[0]["core_c"],
        # middle of the largest face: on the surface across the thinnest size, centred on the other two
        "surface_c": thin[0]["surface_c"] * mid[0]["core_c"] * thick[0]["core_c"],
        "corner_c": thin[0]["surface_c"] * mid[0]["surface_c"] * thick[0]["surface_c"],
        "mean_c": thin[0]["mean_c"] * mid[0]["mean_c"] * thick[0]["mean_c"],
    }
    check(tr, want, thin[1] + mid[1] + thick[1], f"block {half}")


@pytest.mark.parametrize("radius, half_length", [(0.03, 0.06), (0.06, 0.025)], ids=["long", "disc"])
def test_short_cylinder_is_bar_times_plate(radius: float, half_length: float) -> None:
    tr = run_one(
        PartThermal(Shape("cylinder", (radius, half_length)), CR_MO_STEEL, T0),
        [Step(DUR, AMB, const_face(H))],
        samples=60,
    )
    b, bb = one_d("bar", radius)
    p, pb = one_d("plate", half_length)
    # the engine reports the face point nearest the centre: the skin at mid-length of a long cylinder,
    # the middle of an end face of a disc (workers/thermal/layout.py)
    surface = b["surface_c"] * p["core_c"] if radius <= half_length else b["core_c"] * p["surface_c"]
    want = {
        "core_c": b["core_c"] * p["core_c"],
        "surface_c": surface,
        "corner_c": b["surface_c"] * p["surface_c"],
        "mean_c": b["mean_c"] * p["mean_c"],
    }
    check(tr, want, bb + pb, f"cylinder R={radius}, half length={half_length}")
