"""Material property integrals and limits: enthalpy and Kirchhoff integrals of piecewise-linear curves,
and the slowest diffusivity of a material (for conservative mode counts and first time steps)."""

from __future__ import annotations

import numpy as np

from workers.thermal.spec import Curve, FloatArray, Material


def integral(curve: Curve, temp_c: FloatArray) -> FloatArray:
    """Integral of a piecewise-linear curve from its first point to ``temp_c`` (flat beyond the ends):
    int cp dT for the enthalpy, int k dT for the Kirchhoff integral."""
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


def slowest_diffusivity(material: Material) -> float:
    """Smallest k / (rho cp) over the material's tables, m^2/s."""
    temps = np.array(sorted(set(material.conductivity.temp_c) | set(material.specific_heat.temp_c)))
    alpha = material.conductivity(temps) / (material.density * material.specific_heat(temps))
    return float(np.min(alpha))
