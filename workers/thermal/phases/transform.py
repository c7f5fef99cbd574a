"""Phase fractions per node through any temperature history: the state a march carries.

Phases: austenite, ferrite, pearlite, bainite, martensite (fractions of the whole, summing to 1).

- Heating: austenite forms between Ac1 and Ac3 towards the slow-heating fraction
  (``Critical.austenite_equilibrium``), taking from the other phases in proportion; furnace heating is
  slow enough for that (an assumption, README "Phases and hardness"). New austenite restarts the
  cooling reactions' clocks.
- Cooling: ferrite below Ac3 up to the equilibrium ferrite at the temperature (lever rule), pearlite
  below Ac1, bainite below Bs, each by the additivity rule over Kirkaldy and Venugopalan's isothermal
  kinetics (``kinetics``): its sum S grows by dt / F(T) and its progress X = S^-1(S); in a step each
  converts the share (X_new - X_old) / (1 - X_old) of what it can still take (ferrite the room left
  below its equilibrium amount, pearlite and bainite the untransformed austenite). Diffusional
  reactions stop below Ms.
- Martensite below Ms by Koistinen and Marburger (Acta Metall. 7 (1959) 59-60): the austenite left at
  Ms falls as exp(-alpha (Ms - T)), alpha = 0.011 1/K, athermal (it moves only when the node reaches a
  temperature lower than any since Ms).

Carbon enrichment of the austenite by ferrite (which lowers its Ms and slows the later reactions) is not
followed; neither is tempering of martensite on reheating.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import NDArray

from workers.thermal.phases.composition import Composition
from workers.thermal.phases.critical import critical_temperatures
from workers.thermal.phases.kinetics import Kinetics, progress, rates
from workers.thermal.spec import FloatArray

PHASES = ("austenite", "ferrite", "pearlite", "bainite", "martensite")
A, F, P, B, M = range(5)
KM_ALPHA = 0.011  # 1/K, Koistinen and Marburger (1959)


def koistinen_marburger(undercooling_k: FloatArray | float) -> FloatArray:
    """Martensite fraction of the austenite present at Ms, ``undercooling_k`` below it."""
    return np.asarray(1.0 - np.exp(-KM_ALPHA * np.maximum(undercooling_k, 0.0)), dtype=float)


@dataclass(frozen=True)
class PhaseState:
    """State of every node: ``frac`` (5, n) by ``PHASES``; ``sums`` (3, n) the additivity sums of
    ferrite, pearlite and bainite; ``lowest_c`` (n,) the lowest temperature since the node last became
    austenite (inf before), for the athermal martensite."""

    frac: FloatArray
    sums: FloatArray
    lowest_c: FloatArray

    @property
    def austenite(self) -> FloatArray:
        return np.asarray(self.frac[A], dtype=float)

    def copy(self) -> PhaseState:
        return PhaseState(self.frac.copy(), self.sums.copy(), self.lowest_c.copy())


@dataclass(frozen=True)
class Transformer:
    """Per-node constants of the steels (``steel[i]`` the index of node i's composition)."""

    crit: dict[str, FloatArray]
    kin: dict[str, FloatArray]

    @staticmethod
    def for_nodes(steels: Sequence[Composition], steel: Sequence[int] | NDArray[np.intp]) -> Transformer:
        idx = np.asarray(steel, dtype=np.intp)
        crits = [critical_temperatures(c) for c in steels]
        kins = [Kinetics.of(c) for c in steels]
        crit = {
            name: np.array([getattr(c, name) for c in crits], dtype=float)[idx]
            for name in ("ac1", "ac3", "ms", "bs", "ferrite")
        }
        kin = {
            name: np.array([getattr(k, name) for k in kins], dtype=float)[idx]
            for name in ("ferrite_g", "pearlite_g", "bainite_g")
        }
        return Transformer(crit, kin)

    @property
    def size(self) -> int:
        return int(self.crit["ac1"].size)

    def initial(self, austenite: FloatArray | float = 0.0) -> PhaseState:
        """Ferrite and pearlite in equilibrium proportions (a normalised or annealed start), or a share
        of austenite (1.0: a part taken from a furnace above Ac3)."""
        n = self.size
        aus = np.broadcast_to(np.asarray(austenite, dtype=float), (n,)).copy()
        frac = np.zeros((5, n))
        frac[A] = aus
        frac[F] = (1.0 - aus) * self.crit["ferrite"]
        frac[P] = (1.0 - aus) * (1.0 - self.crit["ferrite"])
        return PhaseState(frac, np.zeros((3, n)), np.full(n, np.inf))

    def advance(self, state: PhaseState, temp_c: FloatArray, dt_s: float | FloatArray) -> PhaseState:
        """The state after ``dt_s`` spent at ``temp_c`` (per node), from ``state``."""
        temp = np.asarray(temp_c, dtype=float)
        frac = state.frac.copy()
        sums = state.sums.copy()
        lowest = state.lowest_c.copy()
        crit = self.crit
        # Heating: austenite towards its slow-heating fraction, from the others in proportion.
        span = crit["ac3"] - crit["ac1"]
        target = np.clip((temp - crit["ac1"]) / span, 0.0, 1.0)
        gain = np.maximum(target - frac[A], 0.0)
        heating = gain > 0.0
        if np.any(heating):
            others = 1.0 - frac[A]
            keep = np.where(others > 0.0, (others - gain) / np.where(others > 0.0, others, 1.0), 0.0)
            frac[F:] *= np.where(heating, keep, 1.0)
            frac[A] += gain
            sums[:, heating] = 0.0
            lowest[heating] = np.inf
        # Cooling: the diffusional reactions on the austenite there is, above Ms.
        active = (frac[A] > 0.0) & (temp > crit["ms"]) & ~heating
        if np.any(active):
            rate_f, rate_p, rate_b = rates(temp, crit, self.kin)
            dt = np.broadcast_to(np.asarray(dt_s, dtype=float), temp.shape)
            x_old = progress(sums)
            sums[0] += np.where(active, dt * rate_f, 0.0)
            sums[1] += np.where(active, dt * rate_p, 0.0)
            sums[2] += np.where(active, dt * rate_b, 0.0)
            x_new = progress(sums)
            share = np.where(x_old < 1.0, (x_new - x_old) / np.maximum(1.0 - x_old, 1e-300), 1.0)
            share = np.clip(share, 0.0, 1.0)
            feq = crit["ferrite"] * np.clip((crit["ac3"] - temp) / span, 0.0, 1.0)
            room = np.clip(feq - frac[F], 0.0, frac[A])
            for phase, row, limit in ((F, 0, room), (P, 1, None), (B, 2, None)):
                take = share[row] * (frac[A] if limit is None else np.minimum(limit, frac[A]))
                take = np.where(active, take, 0.0)
                frac[phase] += take
                frac[A] -= take
        # Martensite: athermal, below Ms and below the lowest temperature reached since.
        below = (temp < crit["ms"]) & (temp < lowest) & (frac[A] > 0.0)
        if np.any(below):
            start = np.minimum(lowest, crit["ms"])
            left = frac[A] * np.exp(-KM_ALPHA * (start - temp))
            frac[M] += np.where(below, frac[A] - left, 0.0)
            frac[A] = np.where(below, left, frac[A])
        lowest = np.where(temp < crit["ms"], np.minimum(lowest, temp), lowest)
        np.clip(frac, 0.0, 1.0, out=frac)
        return replace(state, frac=frac, sums=sums, lowest_c=lowest)
