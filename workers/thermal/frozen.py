"""Coefficients of a series step and the property integrals the march tabulates.

A series step needs h, k and rho*c constant over the step; ``face_coefficient`` also folds radiation
into an equivalent coefficient, exact at the instant it is taken:
eps sigma (T_s^4 - T_a^4) = h_r (T_s - T_a) with h_r = eps sigma (T_s^2 + T_a^2)(T_s + T_a), kelvin.
``enthalpy`` integrates a piecewise-linear curve exactly (int cp dT, or int k dT for the Kirchhoff
integral).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from workers.thermal.spec import Curve, Face, FloatArray, Material

SIGMA = 5.670374419e-8  # W/m^2/K^4, CODATA 2018
KELVIN = 273.15


@dataclass(frozen=True)
class Frozen:
    """Face coefficients h (P, F) W/m^2/K; conductivity k (P,) W/m/K; heat capacity rc (P,) J/m^3/K."""

    h: FloatArray
    k: FloatArray
    rc: FloatArray


def face_coefficient(face: Face, surface_c: FloatArray, ambient_c: FloatArray) -> FloatArray:
    """Convective plus radiative coefficient of one face for each part."""
    h = np.asarray(face.htc(surface_c), dtype=float)
    if face.emissivity > 0.0:
        ts = surface_c + KELVIN
        ta = ambient_c + KELVIN
        h = h + face.emissivity * SIGMA * (ts * ts + ta * ta) * (ts + ta)
    return h


def enthalpy(curve: Curve, temp_c: FloatArray) -> FloatArray:
    """Integral of a piecewise-linear curve from its first point to ``temp_c`` (flat beyond the ends)."""
    tp = np.asarray(curve.temp_c, dtype=float)
    vp = np.asarray(curve.value, dtype=float)
    t = np.asarray(temp_c, dtype=float)
    if tp.size == 1:
        return np.asarray(vp[0] * (t - tp[0]), dtype=float)
    seg = np.concatenate(([0.0], np.cumsum(0.5 * (vp[1:] + vp[:-1]) * np.diff(tp))))
    i = np.clip(np.searchsorted(tp, t, side="right") - 1, 0, tp.size - 2)
    tc = np.clip(t, tp[0], tp[-1])
    dt = tc - tp[i]
    slope = (vp[i + 1] - vp[i]) / (tp[i + 1] - tp[i])
    inside = seg[i] + vp[i] * dt + 0.5 * slope * dt * dt
    below = np.minimum(t - tp[0], 0.0) * vp[0]
    above = np.maximum(t - tp[-1], 0.0) * vp[-1]
    return np.asarray(inside + below + above, dtype=float)


class MaterialSet:
    """Per-part property look-ups for a group, looping over distinct materials only."""

    def __init__(self, materials: Sequence[Material]) -> None:
        self.unique = list(dict.fromkeys(materials))
        index = {m: i for i, m in enumerate(self.unique)}
        self.which = np.array([index[m] for m in materials], dtype=int)
        self.density = np.array([m.density for m in materials], dtype=float)
        self.constant = all(m.is_constant for m in self.unique)

    def _each(self, temp_c: FloatArray, f: str) -> FloatArray:
        """Property ``f`` (k or cp) of each part at its temperature ``temp_c[i]``."""
        out = np.full_like(temp_c, np.nan, dtype=float)  # every part has one of the materials
        for i, m in enumerate(self.unique):
            sel = self.which == i
            out[sel] = (m.conductivity if f == "k" else m.specific_heat)(temp_c[sel])
        return out

    def conductivity(self, temp_c: FloatArray) -> FloatArray:
        return self._each(temp_c, "k")

    def heat_capacity(self, temp_c: FloatArray) -> FloatArray:
        """rho * cp at ``temp_c``, J/m^3/K."""
        return self.density * self._each(temp_c, "cp")

    def slowest_diffusivity(self) -> FloatArray:
        """Smallest k / (rho cp) over each material's tables, m^2/s (for conservative mode counts)."""
        out = np.full(self.which.shape, np.nan)  # every part has one of the materials
        for i, m in enumerate(self.unique):
            temps = np.array(sorted(set(m.conductivity.temp_c) | set(m.specific_heat.temp_c)))
            alpha = m.conductivity(temps) / (m.density * m.specific_heat(temps))
            out[self.which == i] = float(np.min(alpha))
        return out
