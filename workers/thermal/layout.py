"""How each part shape is built from 1-D axes, where its reported points lie, and its mode counts.

``Layout`` is how the engine lays a part out; every method works on parts of one layout:
- ``PLATE``: one symmetric plate axis (half thickness a)
- ``PLATE2``: one two-face plate axis (full thickness L), for plates when some step has a lower face
- ``BAR``: one bar axis (radius R)
- ``BLOCK``: three ``PLATE`` axes, half sizes sorted ascending so axis 0 is the thinnest and the middle
  of the largest face is xi = (1, 0, 0)
- ``CYLINDER``: a ``BAR`` axis (R) and a ``PLATE`` axis (half length); its reported surface is the face
  point nearest the centre (skin at mid-length when R <= half length, else the middle of an end face)

The three 1-D layouts are also the axis types of the others (``AXES``).

Mode counts come from the tolerance: enough modes that the first dropped terms, bounded with the lower
bounds lam_n >= n pi (plates) and lam_n >= j_{1,n} (bars), are below the tolerance at the earliest
reported time after any step start.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum

import numpy as np

from workers.thermal.eigen import J1_ZEROS
from workers.thermal.spec import FloatArray, PartThermal


class Layout(StrEnum):
    PLATE = "plate"
    PLATE2 = "plate2"
    BAR = "bar"
    BLOCK = "block"
    CYLINDER = "cylinder"

    @property
    def solid(self) -> bool:
        """Blocks and short cylinders: more than one axis."""
        return self in (Layout.BLOCK, Layout.CYLINDER)


AXES: dict[Layout, tuple[Layout, ...]] = {
    Layout.PLATE: (Layout.PLATE,),
    Layout.PLATE2: (Layout.PLATE2,),
    Layout.BAR: (Layout.BAR,),
    Layout.BLOCK: (Layout.PLATE, Layout.PLATE, Layout.PLATE),
    Layout.CYLINDER: (Layout.BAR, Layout.PLATE),
}
MAX_MODES = {1: 120, 2: 40, 3: 14}
TAIL = 150  # modes past the kept ones summed into the truncation bound


def layout_of(part: PartThermal, two_face: bool) -> Layout:
    """A plate becomes a two-face plate when any step of its schedule has a lower face."""
    kind = part.shape.kind
    if kind == "plate":
        return Layout.PLATE2 if two_face else Layout.PLATE
    if two_face:
        raise ValueError(f"a second face is only modelled for plates, not for a {kind}")
    return Layout(kind)


def axis_lengths(layout: Layout, part: PartThermal) -> tuple[float, ...]:
    """Length scale of each axis in metres (half size, radius, or full thickness for ``PLATE2``)."""
    h = part.shape.half_sizes_m
    if layout == Layout.PLATE2:
        return (2 * h[0],)
    if layout == Layout.BLOCK:
        return tuple(sorted(h))
    return tuple(h)


@dataclass(frozen=True)
class Points:
    """Reported points as xi per axis, (P, ndim) each; ``None`` when a layout does not report it."""

    core: FloatArray
    surface: FloatArray
    corner: FloatArray | None
    second: FloatArray | None


def points(layout: Layout, lengths: FloatArray) -> Points:
    P = lengths.shape[0]
    if layout in (Layout.PLATE, Layout.BAR):
        return Points(np.zeros((P, 1)), np.ones((P, 1)), None, None)
    if layout == Layout.PLATE2:
        return Points(np.full((P, 1), 0.5), np.zeros((P, 1)), None, np.ones((P, 1)))
    if layout == Layout.BLOCK:
        surf = np.zeros((P, 3))
        surf[:, 0] = 1.0
        return Points(np.zeros((P, 3)), surf, np.ones((P, 3)), None)
    skin_nearer = lengths[:, 0] <= lengths[:, 1]
    surf = np.where(skin_nearer[:, None], [[1.0, 0.0]], [[0.0, 1.0]])
    return Points(np.zeros((P, 2)), surf, np.ones((P, 2)), None)


def lower_roots(axis: Layout, n: int) -> FloatArray:
    """Lower bounds of the first ``n`` dimensionless roots of an axis, valid for any Biot number."""
    if axis == Layout.BAR:
        return np.asarray(J1_ZEROS[:n], dtype=float)
    return np.arange(n, dtype=float) * np.pi


def coefficient_bound(axis: Layout, lam: FloatArray) -> FloatArray:
    """Bound on |a_n| * max|X_n| per unit of the largest |theta| in the initial profile (Cauchy-Schwarz)."""
    if axis == Layout.BAR:
        # ||J0(lam r)||_r^2 >= 1/(pi lam) for lam >= 1 (asymptotic form); generous below
        return np.sqrt(0.5 * np.pi * np.maximum(lam, 1.0)) * 1.5
    return np.full_like(lam, 2.0)


def tail_sums(axis: Layout, n_modes: int, decay: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Kept and dropped sums of bound * exp(-lam^2 * decay) for decay = alpha tau / length^2 (any shape)."""
    lam = lower_roots(axis, n_modes + TAIL)
    g = coefficient_bound(axis, lam)
    terms = g * np.exp(-np.multiply.outer(decay, lam**2))
    return terms[..., :n_modes].sum(-1), terms[..., n_modes:].sum(-1)


def forced_terms(axis: Layout, lam: FloatArray) -> FloatArray:
    """Bound on the quasi-steady lag of each mode under a ramp, per unit of rate * length^2 / alpha.

    The lag of mode n is rate * c_n / kappa_n with c_n the coefficient of 1: |c_n X_n| <= 4/(2 lam - 1)
    for plates, and about sqrt(2 pi / lam) for bars (large-argument Bessel forms, with margin).
    """
    safe = np.where(lam > 1.0, lam, np.inf)
    ones = 1.5 * np.sqrt(2 * np.pi / safe) if axis == Layout.BAR else 4.0 / (2 * safe - 1)
    return np.asarray(ones / safe**2, dtype=float)


def choose_modes(
    axis: Layout, ndim: int, decay_min: float, span_k: float, forced_k: float, budget_k: float
) -> int:
    """Smallest mode count whose first dropped term is below ``budget_k``.

    The tail has two parts: the decaying transient of a profile of span ``span_k`` at ``decay_min``
    (alpha tau / length^2), and the lag a ramp keeps in each mode, ``forced_k`` = rate * length^2 / alpha.
    """
    cap = MAX_MODES[ndim]
    if axis == Layout.BAR:
        cap = min(cap, len(J1_ZEROS) - TAIL)
    lam = lower_roots(axis, cap + TAIL)
    terms = span_k * coefficient_bound(axis, lam) * np.exp(-(lam**2) * decay_min)
    terms = terms + forced_k * forced_terms(axis, lam)
    # DEVELOPERS.md, mode counts: the first dropped term below the tolerance (with a factor 2 of
    # margin); the reported bound_k sums the whole tail, so any shortfall shows in the trace
    first = 2.0 * terms[: cap + 1]
    lo_n = 2 if axis == Layout.PLATE2 else 1
    ok = np.nonzero(first[lo_n:] <= budget_k)[0]
    return int(lo_n + ok[0]) if ok.size else cap
