"""Eigenvalues of the 1-D conduction problems with convective (Robin) faces, vectorised over parts.

Symbols: ``Bi`` Biot number h*a/k (a the half thickness or radius), ``lam`` dimensionless eigenvalue,
``n`` number of modes. Each equation is written in a pole-free form weighted by ``w = Bi/(1+Bi)`` so
that Bi = 0 (insulated) and Bi = inf (fixed surface temperature) are ordinary inputs:

- plate, same exchange on both faces:  (1-w) lam sin(lam) - w cos(lam) = 0,  one root in [n pi, n pi + pi/2]
- round bar:                           (1-w) lam J1(lam) - w J0(lam) = 0,    one root between the
                                       n-th zero of J1 (counting 0) and the (n+1)-th zero of J0
- plate with two faces (z = mu L, L the full thickness, B_i = h_i L / k):
  (z^2 u1 u2 - w1 w2) sin z - z (w1 u2 + w2 u1) cos z = 0 with u = 1 - w, one root in (n pi, (n+1) pi]

Roots are found by Newton's method kept inside the bracket (bisection when a step leaves it).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from scipy import special

from workers.thermal.spec import FloatArray

_ITER = 60


def biot_weight(Bi: FloatArray) -> FloatArray:
    """w = Bi / (1 + Bi), exact at Bi = 0 and Bi = inf."""
    Bi = np.asarray(Bi, dtype=float)
    return np.where(np.isinf(Bi), 1.0, Bi / (1.0 + np.where(np.isinf(Bi), 0.0, Bi)))


def _newton_bracketed(
    f: Callable[[FloatArray], tuple[FloatArray, FloatArray]],
    lo: FloatArray,
    hi: FloatArray,
    x0: FloatArray,
) -> FloatArray:
    """Safeguarded Newton on many brackets at once; ``f`` returns value and derivative."""
    lo, hi = lo.copy(), hi.copy()
    flo, _ = f(lo)
    x = np.clip(x0, lo, hi)
    scale = np.maximum(np.abs(hi), 1.0)
    active = np.ones(x.shape, dtype=bool)
    for _ in range(_ITER):
        fx, dfx = f(x)
        # shrink the bracket with the sign of f(x)
        same = np.sign(fx) == np.sign(flo)
        lo = np.where(same, x, lo)
        flo = np.where(same, fx, flo)
        hi = np.where(same, hi, x)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = fx / dfx
        xn = x - step
        inside = np.isfinite(xn) & (xn >= lo) & (xn <= hi)
        # a step that leaves the bracket bisects, unless it is only rounding at a converged root
        tiny = np.abs(step) <= 1e-13 * scale
        xn = np.where(inside, xn, np.where(tiny, x, 0.5 * (lo + hi)))
        converged = (np.abs(xn - x) <= 1e-14 * scale) | (fx == 0.0)
        x = np.where(active & (fx != 0.0), xn, x)
        active &= ~converged
        if not active.any():
            break
    return x


def plate_roots(Bi: FloatArray, n: int, guess: FloatArray | None = None) -> FloatArray:
    """First ``n`` roots of lam tan(lam) = Bi for each Bi; shape (len(Bi), n)."""
    w = biot_weight(np.atleast_1d(Bi))[:, None]
    k = np.arange(n, dtype=float)[None, :]
    lo = np.broadcast_to(k * np.pi, (w.shape[0], n)).copy()
    hi = lo + 0.5 * np.pi

    def f(lam: FloatArray) -> tuple[FloatArray, FloatArray]:
        s, c = np.sin(lam), np.cos(lam)
        return (1 - w) * lam * s - w * c, (1 - w) * (s + lam * c) + w * s

    x0 = lo + 0.5 * np.pi * w if guess is None else guess
    lam = _newton_bracketed(f, lo, hi, x0)
    # exact limits, so insulated and fixed-surface cases carry no rounding at all
    lam = np.where(w == 0.0, lo, lam)
    return np.where(w == 1.0, hi, lam)


J0_ZEROS = special.jn_zeros(0, 1000)
J1_ZEROS = np.concatenate(([0.0], special.jn_zeros(1, 999)))


def bar_roots(Bi: FloatArray, n: int, guess: FloatArray | None = None) -> FloatArray:
    """First ``n`` roots of lam J1(lam) = Bi J0(lam) for each Bi; shape (len(Bi), n)."""
    if n > len(J0_ZEROS):
        raise ValueError(f"at most {len(J0_ZEROS)} bar modes are supported, asked for {n}")
    w = biot_weight(np.atleast_1d(Bi))[:, None]
    lo = np.broadcast_to(J1_ZEROS[:n][None, :], (w.shape[0], n)).copy()
    hi = np.broadcast_to(J0_ZEROS[:n][None, :], (w.shape[0], n)).copy()

    def f(lam: FloatArray) -> tuple[FloatArray, FloatArray]:
        j0, j1 = special.j0(lam), special.j1(lam)
        return (1 - w) * lam * j1 - w * j0, (1 - w) * lam * j0 + w * j1

    x0 = lo + (hi - lo) * w if guess is None else guess
    lam = _newton_bracketed(f, lo, hi, x0)
    lam = np.where(w == 0.0, lo, lam)
    return np.where(w == 1.0, hi, lam)


def two_face_roots(B1: FloatArray, B2: FloatArray, n: int, guess: FloatArray | None = None) -> FloatArray:
    """First ``n`` roots z = mu L of a plate whose faces have Biot numbers B1, B2 (on full thickness L)."""
    w1 = biot_weight(np.atleast_1d(B1))[:, None]
    w2 = biot_weight(np.atleast_1d(B2))[:, None]
    u1, u2 = 1 - w1, 1 - w2
    mix = w1 * u2 + w2 * u1
    k = np.arange(n, dtype=float)[None, :]
    lo = np.broadcast_to(k * np.pi, (w1.shape[0], n)).copy()
    hi = lo + np.pi
    # the n = 0 bracket starts just right of the trivial root z = 0
    lo[:, 0] = 1e-9

    def f(z: FloatArray) -> tuple[FloatArray, FloatArray]:
        s, c = np.sin(z), np.cos(z)
        q = z * z * u1 * u2 - w1 * w2
        val = q * s - z * mix * c
        der = 2 * z * u1 * u2 * s + q * c - mix * (c - z * s)
        return val, der

    x0 = lo + 0.5 * np.pi if guess is None else guess
    z = _newton_bracketed(f, lo, hi, x0)
    both_insulated = (w1 == 0.0) & (w2 == 0.0)
    both_fixed = (w1 == 1.0) & (w2 == 1.0)
    z = np.where(both_insulated, k * np.pi, z)
    return np.where(both_fixed, (k + 1) * np.pi, z)
