"""Mode families of the 1-D factors (plate, two-face plate, bar) and their closed-form inner products.

Every axis is mapped to xi in [0, 1]:
- symmetric plate: xi = x / a (a half thickness), xi = 0 the centre; modes X = cos(lam xi), weight 1
- two-face plate: xi = x / L (L full thickness), xi = 0 the first face; X = p cos(z xi) + q sin(z xi),
  weight 1 (the symmetric plate is the case p = 1, q = 0)
- round bar: xi = r / R; modes X = J0(lam xi), weight xi

Arrays are (P, N): P parts of one group, N modes. ``transfer(new, old)`` is the (P, N_new, N_old) matrix
that re-expands a series in ``old`` modes onto ``new`` ones: <X_old_i, X_new_j>_w / <X_new_j, X_new_j>_w.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import special

from workers.thermal.spec import FloatArray


def _S(x: FloatArray) -> FloatArray:
    """Integral of cos(x xi) over [0, 1]: sin(x)/x."""
    return np.sinc(x / np.pi)


def _C(x: FloatArray) -> FloatArray:
    """Integral of sin(x xi) over [0, 1]: (1 - cos x)/x, written without cancellation."""
    return 0.5 * x * np.sinc(x / (2 * np.pi)) ** 2


def _Sx(z: FloatArray) -> FloatArray:
    """Integral of xi cos(z xi) over [0, 1]."""
    small = np.abs(z) < 1e-3
    zs = np.where(small, 1.0, z)
    exact = np.sin(zs) / zs + (np.cos(zs) - 1) / zs**2
    return np.where(small, 0.5 - z**2 / 8, exact)


def _Cx(z: FloatArray) -> FloatArray:
    """Integral of xi sin(z xi) over [0, 1]."""
    small = np.abs(z) < 1e-3
    zs = np.where(small, 1.0, z)
    exact = np.sin(zs) / zs**2 - np.cos(zs) / zs
    return np.where(small, z / 3 - z**3 / 30, exact)


@dataclass(frozen=True)
class TrigModes:
    """X = p cos(z xi) + q sin(z xi) on [0, 1] with weight 1."""

    z: FloatArray
    p: FloatArray
    q: FloatArray

    @staticmethod
    def symmetric(lam: FloatArray) -> TrigModes:
        return TrigModes(lam, np.ones_like(lam), np.zeros_like(lam))

    @staticmethod
    def two_face(z: FloatArray, w1: FloatArray) -> TrigModes:
        """Modes satisfying X'(0) = B1 X(0); written with w1 = B1/(1+B1) so B1 = inf is exact."""
        w1 = np.broadcast_to(np.asarray(w1, dtype=float).reshape(-1, 1), z.shape)
        p = np.where(w1 == 0.0, 1.0, (1 - w1) * z)
        q = np.where(w1 == 0.0, 0.0, w1)
        r = np.hypot(p, q)
        return TrigModes(z, p / r, q / r)

    def at(self, xi: float | FloatArray) -> FloatArray:
        return self.p * np.cos(self.z * xi) + self.q * np.sin(self.z * xi)

    def slope(self, xi: float | FloatArray) -> FloatArray:
        """dX/dxi at xi."""
        return self.z * (self.q * np.cos(self.z * xi) - self.p * np.sin(self.z * xi))

    def integral(self) -> FloatArray:
        """Integral of X over [0, 1] (the domain has measure 1)."""
        return self.p * _S(self.z) + self.q * _C(self.z)

    def integral_xi(self) -> FloatArray:
        """Integral of xi X over [0, 1]."""
        return self.p * _Sx(self.z) + self.q * _Cx(self.z)

    def gram(self, other: TrigModes) -> FloatArray:
        """<self_j, other_i> as (P, N_self, N_other).

        Closed forms over [0, 1] with d = a^2 - b^2 use only sin and cos of each mode's own root, so no
        trigonometric function is evaluated on the (N, N) grid:
        int cos a cos b = (a sin a cos b - b cos a sin b) / d,
        int sin a sin b = (b sin a cos b - a cos a sin b) / d,
        int sin a cos b = (a - a cos a cos b - b sin a sin b) / d.
        Pairs closer than 1e-7 (the same mode) take the diagonal forms.
        """
        a = self.z[:, :, None]
        b = other.z[:, None, :]
        sa, ca = np.sin(a), np.cos(a)
        sb, cb = np.sin(b), np.cos(b)
        d = a * a - b * b
        close = np.abs(a - b) < 1e-7 * np.maximum(1.0, a)
        dd = np.where(close, 1.0, d)
        p1, q1 = self.p[:, :, None], self.q[:, :, None]
        p2, q2 = other.p[:, None, :], other.q[:, None, :]
        sacb, casb = sa * cb, ca * sb
        icc = (a * sacb - b * casb) / dd
        out = p1 * p2 * icc
        symmetric = not (np.any(self.q) or np.any(other.q))
        if not symmetric:
            iss = (b * sacb - a * casb) / dd
            isc_ab = (a - a * ca * cb - b * sa * sb) / dd  # sin(a) cos(b)
            isc_ba = (b - b * ca * cb - a * sa * sb) / -dd  # sin(b) cos(a)
            out = out + q1 * q2 * iss + q1 * p2 * isc_ab + p1 * q2 * isc_ba
        if np.any(close):
            idx = np.nonzero(close)
            full = (idx[0], idx[1], idx[2])
            ab = np.broadcast_to(a, out.shape)[full] + np.broadcast_to(b, out.shape)[full]
            pp = np.broadcast_to(p1 * p2, out.shape)[full]
            Sp = _S(ab)
            diag = pp * 0.5 * (1.0 + Sp)
            if not symmetric:
                qq = np.broadcast_to(q1 * q2, out.shape)[full]
                mix = np.broadcast_to(q1 * p2 + p1 * q2, out.shape)[full]
                diag = diag + qq * 0.5 * (1.0 - Sp) + mix * 0.5 * _C(ab)
            out = np.array(out, dtype=float)
            out[full] = diag
        return np.asarray(out, dtype=float)

    def norm2(self) -> FloatArray:
        z = self.z
        Sm, Sp = 1.0, _S(2 * z)
        icc = 0.5 * (Sm + Sp)
        iss = 0.5 * (Sm - Sp)
        isc = 0.5 * _C(2 * z)
        return self.p**2 * icc + self.q**2 * iss + 2 * self.p * self.q * isc

    @property
    def weight_total(self) -> float:
        return 1.0


@dataclass(frozen=True)
class BesselModes:
    """X = J0(lam xi) on [0, 1] with weight xi."""

    z: FloatArray

    def at(self, xi: float | FloatArray) -> FloatArray:
        return np.asarray(special.j0(self.z * xi), dtype=float)

    def slope(self, xi: float | FloatArray) -> FloatArray:
        """dX/dxi at xi."""
        return np.asarray(-self.z * special.j1(self.z * xi), dtype=float)

    def integral(self) -> FloatArray:
        """Integral of xi X over [0, 1]: J1(lam)/lam, 1/2 at lam = 0."""
        z = self.z
        small = z < 1e-6
        zs = np.where(small, 1.0, z)
        return np.where(small, 0.5 - z**2 / 16, special.j1(zs) / zs)

    def gram(self, other: BesselModes) -> FloatArray:
        a = self.z[:, :, None]
        b = other.z[:, None, :]
        j0a, j1a = special.j0(a), special.j1(a)
        j0b, j1b = special.j0(b), special.j1(b)
        den = b * b - a * a
        close = np.abs(den) < 1e-10 * np.maximum(1.0, a * a)
        safe = np.where(close, 1.0, den)
        off = (b * j0a * j1b - a * j1a * j0b) / safe
        diag = 0.5 * (j0a**2 + j1a**2)
        return np.asarray(np.where(close, diag, off), dtype=float)

    def norm2(self) -> FloatArray:
        z = self.z
        return np.asarray(0.5 * (special.j0(z) ** 2 + special.j1(z) ** 2), dtype=float)

    @property
    def weight_total(self) -> float:
        return 0.5


Modes = TrigModes | BesselModes


def transfer(new: Modes, old: Modes) -> FloatArray:
    """Matrix re-expanding coefficients on ``old`` modes onto ``new`` modes, (P, N_new, N_old)."""
    g = new.gram(old)  # type: ignore[arg-type]
    return g / new.norm2()[:, :, None]


def ones(m: Modes) -> FloatArray:
    """Coefficients of the constant function 1."""
    return m.integral() / m.norm2()


def xi_coefficients(m: TrigModes) -> FloatArray:
    """Coefficients of the function xi (two-face plates: the straight-line steady part)."""
    return m.integral_xi() / m.norm2()


def mean_weights(m: Modes) -> FloatArray:
    """Weighted mean of each mode over the axis (what it contributes to the volume mean)."""
    return m.integral() / m.weight_total
