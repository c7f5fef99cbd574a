"""Closed-form solutions built here with scipy, independent of ``workers.thermal``.

Symbols: ``Bi`` Biot number (h a / k, a the half thickness or radius), ``Fo`` Fourier number
(alpha t / a^2), ``lam`` eigenvalues, ``C`` uniform-start coefficients, ``rho`` the relative position
x/a or r/R. Results are dimensionless excess ratios theta / theta_0 = (T - T_amb) / (T_0 - T_amb)
unless a function says otherwise.
"""

from __future__ import annotations

import numpy as np
from scipy.optimize import brentq
from scipy.special import erfc, erfcx, j0, j1, jn_zeros, roots_legendre

from workers.thermal.spec import FloatArray


def plate_roots(Bi: float, n: int) -> FloatArray:
    """First ``n`` roots of lam tan(lam) = Bi, one in each interval (k pi, k pi + pi/2)."""
    if Bi == 0.0:
        return np.asarray(np.pi * np.arange(n), dtype=float)
    if np.isinf(Bi):
        return np.asarray(np.pi * (np.arange(n) + 0.5), dtype=float)
    eps = 1e-14
    return np.array(
        [
            brentq(
                lambda lam: lam * np.sin(lam) - Bi * np.cos(lam),
                k * np.pi + eps,
                (k + 0.5) * np.pi - eps,
                xtol=1e-15,
                rtol=1e-15,
            )
            for k in range(n)
        ]
    )


def bar_roots(Bi: float, n: int) -> FloatArray:
    """First ``n`` roots of lam J1(lam) = Bi J0(lam); the k-th lies between zeros k-1 of J1 and k of J0."""
    z0 = np.asarray(jn_zeros(0, n), dtype=float)
    if np.isinf(Bi):
        return z0
    z1 = np.concatenate([[0.0], jn_zeros(1, n)])
    if Bi == 0.0:
        return z1[:n]
    return np.array(
        [
            brentq(lambda lam: lam * j1(lam) - Bi * j0(lam), z1[k] + 1e-14, z0[k], xtol=1e-15, rtol=1e-15)
            for k in range(n)
        ]
    )


def plate_coeffs(lam: FloatArray) -> FloatArray:
    return np.asarray(4.0 * np.sin(lam) / (2.0 * lam + np.sin(2.0 * lam)), dtype=float)


def bar_coeffs(lam: FloatArray) -> FloatArray:
    return np.asarray(2.0 * j1(lam) / (lam * (j0(lam) ** 2 + j1(lam) ** 2)), dtype=float)


def plate_theta(Bi: float, Fo: FloatArray, rho: float, terms: int = 400) -> FloatArray:
    """Excess ratio in a plate after a step change of ambient, uniform start."""
    lam = plate_roots(Bi, terms)
    fo = np.atleast_1d(np.asarray(Fo, dtype=float))[:, None]
    return np.asarray(np.sum(plate_coeffs(lam) * np.exp(-(lam**2) * fo) * np.cos(lam * rho), axis=1))


def plate_mean_theta(Bi: float, Fo: FloatArray, terms: int = 400) -> FloatArray:
    lam = plate_roots(Bi, terms)
    fo = np.atleast_1d(np.asarray(Fo, dtype=float))[:, None]
    return np.asarray(np.sum(plate_coeffs(lam) * np.sin(lam) / lam * np.exp(-(lam**2) * fo), axis=1))


def bar_theta(Bi: float, Fo: FloatArray, rho: float, terms: int = 400) -> FloatArray:
    """Excess ratio in a round bar after a step change of ambient, uniform start."""
    lam = bar_roots(Bi, terms)
    fo = np.atleast_1d(np.asarray(Fo, dtype=float))[:, None]
    return np.asarray(np.sum(bar_coeffs(lam) * np.exp(-(lam**2) * fo) * j0(lam * rho), axis=1))


def bar_mean_theta(Bi: float, Fo: FloatArray, terms: int = 400) -> FloatArray:
    lam = bar_roots(Bi, terms)
    fo = np.atleast_1d(np.asarray(Fo, dtype=float))[:, None]
    return np.asarray(np.sum(bar_coeffs(lam) * 2.0 * j1(lam) / lam * np.exp(-(lam**2) * fo), axis=1))


def plate_ramp_rise(Bi: float, Fo: FloatArray, rho: float, terms: int = 400) -> FloatArray:
    """Rise T - T_0, in units of r a^2 / alpha, of a plate whose ambient ramps at rate r from T_0.

    Duhamel's integral of the step response 1 - theta(Fo): Fo - sum C_n cos(lam_n rho) (1 - e^{-lam^2 Fo})
    / lam^2 (lam_n > 0 for Bi > 0).
    """
    lam = plate_roots(Bi, terms)
    fo = np.atleast_1d(np.asarray(Fo, dtype=float))[:, None]
    c = plate_coeffs(lam) * np.cos(lam * rho) / lam**2
    return np.asarray(fo[:, 0] - np.sum(c * -np.expm1(-(lam**2) * fo), axis=1))


def semi_infinite_convective(depth_m: FloatArray, t_s: float, alpha: float, k: float, h: float) -> FloatArray:
    """(T - T_i) / (T_inf - T_i) in a semi-infinite solid whose surface meets a fluid at T_inf from t = 0.

    erfc(xi) - exp(h x / k + (h/k)^2 alpha t) erfc(xi + h sqrt(alpha t) / k), xi = x / (2 sqrt(alpha t)),
    written with erfcx so it stays finite for large h.
    """
    x = np.asarray(depth_m, dtype=float)
    xi = x / (2.0 * np.sqrt(alpha * t_s))
    beta = h * np.sqrt(alpha * t_s) / k
    return np.asarray(erfc(xi) - np.exp(-(xi**2)) * erfcx(xi + beta), dtype=float)


def semi_infinite_fixed_heat(t_s: FloatArray, alpha: float, k: float) -> FloatArray:
    """Heat per area and kelvin of surface step a semi-infinite solid takes up: 2 k sqrt(t / (pi alpha))."""
    return np.asarray(2.0 * k * np.sqrt(np.asarray(t_s, dtype=float) / (np.pi * alpha)), dtype=float)


def lumped_radiation_time(t0_c: float, t_c: FloatArray, amb_c: float, tau_rad: float) -> FloatArray:
    """Time for a lumped body to go from ``t0_c`` to ``t_c`` by radiation alone.

    ``tau_rad`` = rho c V / (eps sigma A) in s K^3. With u = T / T_amb (kelvin), the integral of
    dT / (T_amb^4 - T^4) is (ln|(1 + u)/(1 - u)| + 2 arctan u) / (4 T_amb^3).
    """
    ta = amb_c + 273.15

    def prim(temp_c: FloatArray | float) -> FloatArray:
        u = (np.asarray(temp_c, dtype=float) + 273.15) / ta
        return np.asarray((np.log(np.abs((1.0 + u) / (1.0 - u))) + 2.0 * np.arctan(u)) / (4.0 * ta**3))

    return np.asarray(tau_rad * (prim(t_c) - prim(t0_c)), dtype=float)


def plate_two_steps(
    Bi1: float, Bi2: float, Fo1: float, Fo2: FloatArray, t0: float, amb1: float, amb2: float, terms: int = 300
) -> dict[str, FloatArray]:
    """Core, surface and mean (degC) of a plate after a first step (Bi1, amb1, length Fo1) at times Fo2 into
    a second step (Bi2, amb2), uniform start t0.

    The profile at the end of the first step is summed from its series on Gauss-Legendre nodes and
    projected on the second step's modes by quadrature (not by the closed-form transfer matrix).
    """
    nodes, weights = roots_legendre(6000)
    x = 0.5 * (nodes + 1.0)
    w = 0.5 * weights
    lam1 = plate_roots(Bi1, terms)
    prof = amb1 + (t0 - amb1) * (plate_coeffs(lam1) * np.exp(-(lam1**2) * Fo1)) @ np.cos(np.outer(lam1, x))
    mu = plate_roots(Bi2, terms)
    modes = np.cos(np.outer(mu, x))
    norm = 0.5 + np.sin(2 * mu) / (4 * mu)
    b = modes @ (w * (prof - amb2)) / norm
    decay = np.exp(-np.outer(np.atleast_1d(Fo2), mu**2))
    return {
        "core_c": amb2 + decay @ b,
        "surface_c": amb2 + decay @ (b * np.cos(mu)),
        "mean_c": amb2 + decay @ (b * np.sin(mu) / mu),
    }
