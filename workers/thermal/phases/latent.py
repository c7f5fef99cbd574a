"""A steel's latent heat of transformation, taken out of its single specific-heat curve.

A catalog steel's cp(T) carries the transformation as a peak (the EN 1993-1-2 curve's, near 735 degC):
what a steel absorbs on slow heating. With its phases followed, the same heat is released or absorbed
where and when austenite forms or decomposes. ``split_latent`` cuts the peak out: over the window of the
EN 1993-1-2 formula's two transformation pieces (600-735 and 735-900 degC, read: EN 1993-1-2 section
3.4), the curve is replaced by the straight line joining its values at the window's ends, and the area
between the curve and that line is the latent heat L (J/kg). The enthalpy of a node is then
H(T, a) = int cp_base dT + a L with a its austenite fraction: between 20 degC and 1200 degC, slow heating
(a = 1 above Ac3, 0 below Ac1) gives the same enthalpy as the single curve.

Taking the phases' specific heats as equal away from the transformation is an approximation (austenite's
cp is lower than ferrite's near the Curie temperature); L also holds the magnetic share of the peak.
"""

from __future__ import annotations

import numpy as np

from workers.thermal.spec import Curve

WINDOW_C = (600.0, 900.0)


def split_latent(cp: Curve, window: tuple[float, float] = WINDOW_C) -> tuple[Curve, float]:
    """The base curve (peak replaced by the chord over ``window``) and the latent heat in J/kg.

    A curve with nothing above its chord in the window (a constant, a straight line) gives L = 0 and
    comes back unchanged in value.
    """
    low, high = window
    t = np.asarray(cp.temp_c, dtype=float)
    v = np.asarray(cp.value, dtype=float)
    v_low, v_high = float(cp(low)), float(cp(high))
    inside = (t > low) & (t < high)
    grid = np.concatenate([[low], t[inside], [high]])
    values = np.concatenate([[v_low], v[inside], [v_high]])
    chord = v_low + (v_high - v_low) * (grid - low) / (high - low)
    latent = float(np.sum(0.5 * ((values - chord)[1:] + (values - chord)[:-1]) * np.diff(grid)))
    if latent <= 0.0:
        return cp, 0.0
    keep = ~inside
    base_t = np.concatenate([t[keep & (t <= low)], [low, high], t[keep & (t >= high)]])
    base_v = np.concatenate([v[keep & (t <= low)], [v_low, v_high], v[keep & (t >= high)]])
    base_t, idx = np.unique(base_t, return_index=True)
    return Curve(tuple(float(x) for x in base_t), tuple(float(x) for x in base_v[idx])), latent
