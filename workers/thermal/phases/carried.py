"""The phases a march carries per node, and the one call it makes after each time step it has solved.

How any march uses it (the 1-D march in ``march``; a compiled march the same way):

1. Its nodes' enthalpy tables hold the *base* curve of a steel with phases (``latent.split_latent``:
   the transformation peak cut out), the single curve for every other node (``base_material``).
2. ``NodePhases.start`` gives the state at a schedule's start from the node temperatures (austenite by
   the slow-heating fraction between Ac1 and Ac3); a later step continues from the state the step
   before handed on.
3. After solving a time step (``T_before`` -> ``T_after`` over ``dt`` per node), call ``trial``: the
   phases moved at ``T_after`` and the heat they release per volume (``released``, J/m^3, negative
   where austenite forms). The march accepts the step only where the largest change of austenite
   fraction of the part (``change``, per node) is at most its limit (``Tolerance.phase_change``), else
   it retries with a shorter step; on acceptance it keeps the trial's state (``take``) and raises each
   node's base enthalpy by ``released`` at constant total enthalpy (the node's temperature found from
   its own tables), shifting any enthalpy history of a multistep formula by the same amount.

``phase_step`` is the per-node update as one pure function of plain arrays (no objects, no tables):
what a compiled kernel calls per node or per block of nodes. Nodes without phases (``on`` false) keep
zero fractions and release nothing.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from functools import cache

import numpy as np
from numpy.typing import NDArray

from workers.thermal.phases.composition import Composition
from workers.thermal.phases.hardness import RATE_AT_C
from workers.thermal.phases.latent import split_latent
from workers.thermal.phases.transform import PhaseState, Transformer
from workers.thermal.spec import FloatArray, Material

BoolArray = NDArray[np.bool_]
CRIT = ("ac1", "ac3", "ms", "bs", "ferrite")
KIN = ("ferrite_g", "pearlite_g", "bainite_g")


@cache
def base_material(material: Material) -> tuple[Material, float]:
    """The material with its transformation peak cut out of cp, and the latent heat (J/kg)."""
    base, latent = split_latent(material.specific_heat)
    return Material(material.conductivity, material.density, base), latent


def phase_step(
    temp_before: FloatArray,
    temp: FloatArray,
    dt: FloatArray,
    frac: FloatArray,
    sums: FloatArray,
    lowest: FloatArray,
    rate700: FloatArray,
    crit: FloatArray,
    kin: FloatArray,
    latent: FloatArray,
) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray, FloatArray]:
    """One time step of the phases of n nodes, all plain arrays.

    ``temp_before``, ``temp`` (n,) degC at the step's start and end (before the latent heat is placed);
    ``dt`` (n,) s; ``frac`` (5, n), ``sums`` (3, n), ``lowest`` (n,) the ``PhaseState``; ``rate700`` (n,)
    the cooling rate (K/s) where the node last fell through 700 degC (nan before); ``crit`` (5, n) Ac1,
    Ac3, Ms, Bs, ferrite at Ac1; ``kin`` (3, n) the Kirkaldy-Venugopalan constants; ``latent`` (n,) the
    latent heat per volume, J/m^3.

    Returns the new frac, sums, lowest, rate700 and the heat released per volume (J/m^3).
    """
    tr = Transformer(
        {name: crit[i] for i, name in enumerate(CRIT)}, {name: kin[i] for i, name in enumerate(KIN)}
    )
    moved = tr.advance(PhaseState(frac, sums, lowest), temp, dt)
    released = (frac[0] - moved.frac[0]) * latent
    crossed = (temp_before >= RATE_AT_C) & (temp < RATE_AT_C)
    rate = np.where(crossed, (temp_before - temp) / np.maximum(dt, 1e-300), rate700)
    return moved.frac, moved.sums, moved.lowest_c, rate, np.asarray(released, dtype=float)


@dataclass
class NodePhases:
    """Phase state and constants of every node of a march (arrays over all its nodes, flat)."""

    on: BoolArray  # (N,) the node's steel has phases
    crit: FloatArray  # (5, N)
    kin: FloatArray  # (3, N)
    latent: FloatArray  # (N,) J/m^3
    frac: FloatArray  # (5, N) austenite, ferrite, pearlite, bainite, martensite
    sums: FloatArray  # (3, N)
    lowest: FloatArray  # (N,)
    rate700: FloatArray  # (N,) K/s, nan until the node cools through 700 degC

    @staticmethod
    def start(
        compositions: Sequence[Composition | None],
        latent_j_kg: Sequence[float],
        density: Sequence[float],
        part: NDArray[np.intp],
        temp_c: FloatArray,
    ) -> NodePhases:
        """The state at a schedule's start: ``compositions[p]`` etc. per part, ``part`` (N,) each node's
        part, ``temp_c`` (N,) the node temperatures (austenite by its slow-heating fraction)."""
        n = part.size
        has = np.array([c is not None for c in compositions], dtype=bool)
        on = has[part] if n else np.zeros(0, dtype=bool)
        crit = np.zeros((5, n))
        kin = np.zeros((3, n))
        steels = [c for c in compositions if c is not None]
        if steels:
            index = np.cumsum(has) - 1
            tr = Transformer.for_nodes(steels, index[part[on]])
            for i, name in enumerate(CRIT):
                crit[i, on] = tr.crit[name]
            for i, name in enumerate(KIN):
                kin[i, on] = tr.kin[name]
        latent = np.where(on, (np.asarray(latent_j_kg) * np.asarray(density))[part], 0.0)
        frac = np.zeros((5, n))
        span = np.where(on, crit[1] - crit[0], 1.0)
        aus = np.where(on, np.clip((temp_c - crit[0]) / span, 0.0, 1.0), 0.0)
        frac[0] = aus
        frac[1] = np.where(on, (1.0 - aus) * crit[4], 0.0)
        frac[2] = np.where(on, (1.0 - aus) * (1.0 - crit[4]), 0.0)
        return NodePhases(
            on, crit, kin, latent, frac, np.zeros((3, n)), np.full(n, np.inf), np.full(n, np.nan)
        )

    @staticmethod
    def join(parts: Sequence[NodePhases]) -> NodePhases:
        """Nodes of several marches laid one after the other."""

        def cat(name: str) -> FloatArray:
            return np.concatenate([getattr(p, name) for p in parts], axis=-1)

        return NodePhases(*(cat(name) for name in _FIELDS))  # type: ignore[arg-type]

    def subset(self, keep: BoolArray | slice) -> NodePhases:
        """The nodes ``keep`` (a mask or a span), renumbered."""
        return NodePhases(*(getattr(self, name)[..., keep] for name in _FIELDS))

    def trial(
        self, temp_before: FloatArray, temp: FloatArray, dt: FloatArray
    ) -> tuple[NodePhases, FloatArray, FloatArray]:
        """The state after a time step (``dt`` (N,) s from ``temp_before`` to ``temp``), the heat released
        per volume (N,) and the change of austenite fraction (N,), both zero off the phase nodes."""
        on = self.on
        new = NodePhases(
            on, self.crit, self.kin, self.latent, self.frac, self.sums, self.lowest, self.rate700.copy()
        )
        released = np.zeros(on.size)
        change = np.zeros(on.size)
        if not on.any():
            return new, released, change
        frac, sums, lowest, rate, heat = phase_step(
            temp_before[on],
            temp[on],
            dt[on],
            self.frac[:, on],
            self.sums[:, on],
            self.lowest[on],
            self.rate700[on],
            self.crit[:, on],
            self.kin[:, on],
            self.latent[on],
        )
        new.frac, new.sums, new.lowest = self.frac.copy(), self.sums.copy(), self.lowest.copy()
        new.frac[:, on], new.sums[:, on], new.lowest[on], new.rate700[on] = frac, sums, lowest, rate
        released[on] = heat
        change[on] = np.abs(frac[0] - self.frac[0, on])
        return new, released, change

    def take(self, other: NodePhases, where: BoolArray) -> NodePhases:
        """This state with ``other``'s at the nodes ``where``."""
        pick = {name: np.where(where, getattr(other, name), getattr(self, name)) for name in _STATE}
        return NodePhases(self.on, self.crit, self.kin, self.latent, **pick)


_FIELDS = ("on", "crit", "kin", "latent", "frac", "sums", "lowest", "rate700")
_STATE = ("frac", "sums", "lowest", "rate700")


def put(into: NodePhases, nodes: NDArray[np.intp], src: NodePhases) -> None:
    """Write ``src``'s state (all its nodes) into ``into`` at ``nodes`` (the march's record at the end)."""
    for name in _STATE:
        getattr(into, name)[..., nodes] = getattr(src, name)
