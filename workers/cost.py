"""Estimated computing time of each part of a batch, so that a worker's group is sized by work, not count.

The engine runs a linear step (constant h, no radiation, constant properties) as a series, a
nonlinear step of a plate or bar on a 1-D grid, and a block or short cylinder with any nonlinear step
on a 3-D or 2-D grid through its whole schedule (README, "How the temperatures are computed"). The
seconds per part and step below are rough figures measured on this project's benchmark machine
(tests/bench/bench_engine.py: about 1.7 ms per part and step for marched plates and bars; a marched
block takes from under one to several seconds per step depending on the engine version). They only
need to be right within a factor of a few: they decide how many parts a worker takes at once.
"""

from __future__ import annotations

from models import BatchSpec
from workers.convert import to_part, to_step

__all__ = ["SECONDS_PER_STEP", "part_costs"]

SECONDS_PER_STEP = {"series": 0.0005, "line": 0.002, "solid": 1.0}
_SOLID_SHAPES = ("block", "cylinder")


def part_costs(spec: BatchSpec) -> dict[str, float]:
    """Estimated seconds of engine time per part id (the part's whole schedule)."""
    steps = [to_step(s) for s in spec.schedule]
    out: dict[str, float] = {}
    for part in spec.parts:
        thermal = to_part(part)
        linear = [
            thermal.material.is_constant
            and step.face.is_linear
            and (step.second_face is None or step.second_face.is_linear)
            for step in steps
        ]
        if part.shape in _SOLID_SHAPES and not all(linear):
            out[part.id] = SECONDS_PER_STEP["solid"] * len(steps)
        else:
            out[part.id] = sum(SECONDS_PER_STEP["series" if lin else "line"] for lin in linear)
    return out
