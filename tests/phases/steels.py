"""Compositions of the catalog grades as the engine takes them, and a constant-rate cooling helper."""

from __future__ import annotations

import numpy as np

from models import catalog
from workers.thermal.phases import Composition, PhaseState, Transformer


def grade(name: str) -> Composition:
    """The catalog grade's nominal composition."""
    data = catalog.get_material(name).composition
    assert data is not None
    return Composition(**data.values, grain_size=data.grain_size)


def cool_at(
    c: Composition, rates_k_s: list[float], start_c: float = 860.0, end_c: float = 20.0
) -> PhaseState:
    """Phases after cooling fully austenitic steel at constant rates (one node per rate)."""
    tr = Transformer.for_nodes([c], [0] * len(rates_k_s))
    state = tr.initial(1.0)
    rate = np.asarray(rates_k_s, dtype=float)
    steps = 3000
    total = (start_c - end_c) / rate
    for i in range(1, steps + 1):
        state = tr.advance(state, start_c - rate * total * i / steps, total / steps)
    return state
