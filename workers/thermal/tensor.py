"""Small tensor helpers for series over 1, 2 or 3 axes, with the part index first.

A state is a coefficient tensor A of shape (P, N_1, ..., N_d); the temperature excess is
sum A[i,j,k] X_i(x) Y_j(y) Z_k(z). Flattened forms are (P, M) with M = N_1 * ... * N_d.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from workers.thermal.spec import FloatArray

_AX = "ijk"
_NEW = "abc"


def outer(vecs: Sequence[FloatArray]) -> FloatArray:
    """Tensor product of per-axis vectors (P, N_i) -> (P, N_1, ..., N_d)."""
    d = len(vecs)
    spec = ",".join(f"p{_AX[i]}" for i in range(d)) + "->p" + _AX[:d]
    return np.asarray(np.einsum(spec, *vecs), dtype=float)


def apply_axes(mats: Sequence[FloatArray], A: FloatArray) -> FloatArray:
    """Apply a (P, N_new, N_old) matrix along each axis of A."""
    d = len(mats)
    spec = ",".join(f"p{_NEW[i]}{_AX[i]}" for i in range(d)) + f",p{_AX[:d]}->p{_NEW[:d]}"
    return np.asarray(np.einsum(spec, *mats, A, optimize=True), dtype=float)


def add_axes(vals: Sequence[FloatArray]) -> FloatArray:
    """Sum of per-axis (P, N_i) values broadcast to (P, N_1, ..., N_d) (decay rates add up)."""
    d = len(vals)
    out = np.zeros((vals[0].shape[0], *(v.shape[1] for v in vals)))
    for i, v in enumerate(vals):
        shape = [v.shape[0]] + [1] * d
        shape[i + 1] = v.shape[1]
        out = out + v.reshape(shape)
    return out


def phi(x: FloatArray) -> FloatArray:
    """(1 - exp(-x)) / x, equal to 1 at x = 0."""
    small = x < 1e-8
    xs = np.where(small, 1.0, x)
    return np.where(small, 1.0 - 0.5 * x, -np.expm1(-xs) / xs)


def psi(x: FloatArray) -> FloatArray:
    """(x - 1 + exp(-x)) / x^2, equal to 1/2 at x = 0."""
    small = x < 1e-3
    xs = np.where(small, 1.0, x)
    return np.where(small, 0.5 - x / 6 + x * x / 24, (xs + np.expm1(-xs)) / (xs * xs))
