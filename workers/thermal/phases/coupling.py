"""Phases joined to heat: the enthalpy of a node with its austenite, and the latent heat put where and
when the phases change.

A node's enthalpy per volume is ``rho (h_base(T) + a L)``: ``h_base`` the integral of the steel's
specific heat with the transformation peak cut out (``latent.split_latent``), ``a`` its austenite
fraction, ``L`` the latent heat. ``settle`` is the step a march takes after each accepted time step:
it moves the phases with the node temperatures the step reached, then moves each node's temperature
so that its enthalpy is what the step left (the heat a transformation releases stays in the node that
transformed). Energy is conserved to round-off whatever the size of the step; the error is that of
operator splitting, first order in the step, which the march bounds by limiting how much austenite may
change in one step (``max_change``).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from workers.thermal.phases.composition import Composition
from workers.thermal.phases.latent import split_latent
from workers.thermal.phases.transform import PhaseState, Transformer
from workers.thermal.properties import integral
from workers.thermal.spec import Curve, FloatArray

TABLE_C = (-275.0, 2500.0)
TABLE_STEP_K = 0.5


@dataclass(frozen=True)
class Steel:
    """What the coupling needs of one steel: its composition, density and single cp curve."""

    composition: Composition
    density: float  # kg/m^3
    specific_heat: Curve  # J/kg/K, with its transformation peak


class Coupling:
    """Phases and latent heat of every node of a march (``steel[i]`` the steel of node i)."""

    def __init__(self, steels: Sequence[Steel], steel: Sequence[int] | NDArray[np.intp]) -> None:
        self.index = np.asarray(steel, dtype=np.intp)
        self.transformer = Transformer.for_nodes([s.composition for s in steels], self.index)
        self.grid = np.arange(TABLE_C[0], TABLE_C[1] + TABLE_STEP_K / 2, TABLE_STEP_K)
        splits = [split_latent(s.specific_heat) for s in steels]
        self.base_cp = [b for b, _ in splits]
        self.h_table = np.array([integral(b, self.grid) for b in self.base_cp])  # J/kg per steel
        self.latent = np.array([lat for _, lat in splits])[self.index]  # J/kg per node
        self.rho = np.array([s.density for s in steels])[self.index]

    def base_enthalpy(self, temp_c: FloatArray) -> FloatArray:
        """h_base(T) in J/kg per node (linear in the 0.5 K table)."""
        out = np.empty_like(np.asarray(temp_c, dtype=float))
        for k in range(self.h_table.shape[0]):
            mine = self.index == k
            out[mine] = np.interp(temp_c[mine], self.grid, self.h_table[k])
        return out

    def temperature(self, h_base: FloatArray) -> FloatArray:
        """The temperature whose base enthalpy is ``h_base`` (J/kg), per node."""
        out = np.empty_like(np.asarray(h_base, dtype=float))
        for k in range(self.h_table.shape[0]):
            mine = self.index == k
            out[mine] = np.interp(h_base[mine], self.h_table[k], self.grid)
        return out

    def enthalpy(self, temp_c: FloatArray, state: PhaseState) -> FloatArray:
        """rho (h_base(T) + a L), J/m^3 per node."""
        h = self.base_enthalpy(temp_c) + state.austenite * self.latent
        return np.asarray(self.rho * h, dtype=float)

    def settle(
        self, state: PhaseState, temp_c: FloatArray, dt_s: float | FloatArray
    ) -> tuple[PhaseState, FloatArray]:
        """Phases after ``dt_s`` at ``temp_c``, and the temperatures that keep each node's enthalpy."""
        moved = self.transformer.advance(state, temp_c, dt_s)
        released = (state.austenite - moved.austenite) * self.latent  # J/kg, > 0 on decomposition
        if not np.any(released):
            return moved, np.asarray(temp_c, dtype=float)
        return moved, self.temperature(self.base_enthalpy(temp_c) + released)

    @staticmethod
    def max_change(before: PhaseState, after: PhaseState) -> float:
        """Largest change of austenite fraction over the nodes in one step (for the step control)."""
        return float(np.max(np.abs(after.austenite - before.austenite), initial=0.0))
