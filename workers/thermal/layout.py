"""How each part shape is built from 1-D axes, where its reported points lie, and its mode counts.

A group is a set of parts that share a layout, so that one array operation serves them all:
- ``plate``: one symmetric plate axis (half thickness a)
- ``plate2``: one two-face plate axis (full thickness L), used for plates when a step has a second face
- ``bar``: one bar axis (radius R)
- ``block``: three symmetric plate axes, half sizes sorted ascending so axis 0 is the thinnest and the
  middle of the largest face is xi = (1, 0, 0)
- ``cylinder``: a bar axis (R) and a plate axis (half length); its reported surface is the face point
  nearest the centre (skin at mid-length when R <= half length, else the middle of an end face)

Mode counts come from the tolerance: enough modes that the first dropped terms, bounded with the lower
bounds lam_n >= n pi (plates) and lam_n >= j_{1,n} (bars), are below the tolerance at the earliest
reported time after any step start.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

from workers.thermal.eigen import _J1_ZEROS
from workers.thermal.spec import FloatArray, PartThermal

AxisKind = Literal["trig", "bessel", "two"]
Layout = Literal["plate", "plate2", "bar", "block", "cylinder"]

AXES: dict[Layout, tuple[AxisKind, ...]] = {
    "plate": ("trig",),
    "plate2": ("two",),
    "bar": ("bessel",),
    "block": ("trig", "trig", "trig"),
    "cylinder": ("bessel", "trig"),
}
MAX_MODES = {1: 120, 2: 40, 3: 14}
_TAIL = 150


def layout_of(part: PartThermal, two_face: bool) -> Layout:
    kind = part.shape.kind
    if kind == "plate":
        return "plate2" if two_face else "plate"
    if two_face:
        raise ValueError(f"a second face is only modelled for plates, not for a {kind}")
    return kind


def axis_lengths(layout: Layout, part: PartThermal) -> tuple[float, ...]:
    """Length scale of each axis in metres (half size, radius, or full thickness for ``plate2``)."""
    h = part.shape.half_sizes_m
    if layout == "plate2":
        return (2 * h[0],)
    if layout == "block":
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
    if layout in ("plate", "bar"):
        return Points(np.zeros((P, 1)), np.ones((P, 1)), None, None)
    if layout == "plate2":
        return Points(np.full((P, 1), 0.5), np.zeros((P, 1)), None, np.ones((P, 1)))
    if layout == "block":
        surf = np.zeros((P, 3))
        surf[:, 0] = 1.0
        return Points(np.zeros((P, 3)), surf, np.ones((P, 3)), None)
    skin_nearer = lengths[:, 0] <= lengths[:, 1]
    surf = np.where(skin_nearer[:, None], [[1.0, 0.0]], [[0.0, 1.0]])
    return Points(np.zeros((P, 2)), surf, np.ones((P, 2)), None)


def lower_roots(kind: AxisKind, n: int) -> FloatArray:
    """Lower bounds of the first ``n`` dimensionless roots, valid for any Biot number."""
    if kind == "bessel":
        return np.asarray(_J1_ZEROS[:n], dtype=float)
    return np.arange(n, dtype=float) * np.pi


def coefficient_bound(kind: AxisKind, lam: FloatArray) -> FloatArray:
    """Bound on |a_n| * max|X_n| per unit of the largest |theta| in the initial profile (Cauchy-Schwarz)."""
    if kind == "bessel":
        # ||J0(lam r)||_r^2 >= 1/(pi lam) for lam >= 1 (asymptotic form); generous below
        return np.sqrt(0.5 * np.pi * np.maximum(lam, 1.0)) * 1.5
    return np.full_like(lam, 2.0)


def tail_sums(kind: AxisKind, n_modes: int, decay: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Kept and dropped sums of bound * exp(-lam^2 * decay) for decay = alpha tau / length^2 (any shape)."""
    lam = lower_roots(kind, n_modes + _TAIL)
    g = coefficient_bound(kind, lam)
    terms = g * np.exp(-np.multiply.outer(decay, lam**2))
    return terms[..., :n_modes].sum(-1), terms[..., n_modes:].sum(-1)


def forced_terms(kind: AxisKind, lam: FloatArray) -> FloatArray:
    """Bound on the quasi-steady lag of each mode under a ramp, per unit of rate * length^2 / alpha.

    The lag of mode n is rate * c_n / kappa_n with c_n the coefficient of 1: |c_n X_n| <= 4/(2 lam - 1)
    for plates, and about sqrt(2 pi / lam) for bars (large-argument Bessel forms, with margin).
    """
    safe = np.where(lam > 1.0, lam, np.inf)
    ones = 1.5 * np.sqrt(2 * np.pi / safe) if kind == "bessel" else 4.0 / (2 * safe - 1)
    return np.asarray(ones / safe**2, dtype=float)


def choose_modes(
    kind: AxisKind, ndim: int, decay_min: float, span_k: float, forced_k: float, budget_k: float
) -> int:
    """Smallest mode count whose first dropped term is below ``budget_k``.

    The tail has two parts: the decaying transient of a profile of span ``span_k`` at ``decay_min``
    (alpha tau / length^2), and the lag a ramp keeps in each mode, ``forced_k`` = rate * length^2 / alpha.
    """
    cap = MAX_MODES[ndim]
    if kind == "bessel":
        cap = min(cap, len(_J1_ZEROS) - _TAIL)
    lam = lower_roots(kind, cap + _TAIL)
    terms = span_k * coefficient_bound(kind, lam) * np.exp(-(lam**2) * decay_min)
    terms = terms + forced_k * forced_terms(kind, lam)
    # DEVELOPERS.md, mode counts: the first dropped term below the tolerance (with a factor 2 of margin); the
    # reported bound_k sums the whole tail, so any shortfall shows in the trace
    first = 2.0 * terms[: cap + 1]
    lo_n = 2 if kind == "two" else 1
    ok = np.nonzero(first[lo_n:] <= budget_k)[0]
    return int(lo_n + ok[0]) if ok.size else cap
