"""Isothermal kinetics of ferrite, pearlite and bainite: Kirkaldy and Venugopalan's model.

The time to transform a fraction X of what a reaction can form, at a constant temperature T, is
``tau(X, T) = F(T) * S(X)``, with

    F_ferrite  = FC / (2^(0.41 G) (Ac3 - T)^3 exp(-Q / R T))
    F_pearlite = PC / (2^(0.32 G) (Ac1 - T)^3 exp(-Q / R T))
    F_bainite  = BC / (2^(0.29 G) (Bs  - T)^2 exp(-Q / R T))
    S(X) = int_0^X dx / (x^(0.4 (1 - x)) (1 - x)^(0.4 x))

G the ASTM grain size, T in kelvin inside the exponential, and the composition factors FC, PC, BC
(below). The structure is Kirkaldy and Venugopalan's (J. S. Kirkaldy and D. Venugopalan, in Phase
Transformations in Ferrous Alloys, AIME 1984, 125-148); the constants are the recalibration of M. V. Li,
D. V. Niebuhr, L. L. Meekisho and D. G. Atteridge, "A computational model for the prediction of steel
hardenability", Metall. Mater. Trans. B 29 (1998) 661-672, which extended it to more hardenable steels
(constants from memory; checked against published critical cooling rates and by Grossmann's relation in
tests/engine/test_phases_*.py).

Because tau factors into F(T) S(X), the additivity rule (Scheil's, applied to the whole progress) makes
S the state: dS/dt = 1 / F(T), and X = S^-1(S). ``rates`` gives 1/F in 1/s for every node at once.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache

import numpy as np

from workers.thermal.phases.composition import Composition
from workers.thermal.phases.critical import Critical
from workers.thermal.spec import FloatArray

KELVIN = 273.15
Q_OVER_R = 27500.0 / 1.987  # activation energy 27,500 cal/mol over R in cal/mol/K (Li et al. 1998)


def ferrite_factor(c: Composition) -> float:
    """FC of Li et al. (1998), seconds times K^3."""
    return float(
        np.exp(1.00 + 6.31 * c.C + 1.78 * c.Mn + 0.31 * c.Si + 1.12 * c.Ni + 2.70 * c.Cr + 4.06 * c.Mo)
    )


def pearlite_factor(c: Composition) -> float:
    """PC of Li et al. (1998)."""
    return float(
        np.exp(
            -4.25 + 4.12 * c.C + 4.36 * c.Mn + 0.44 * c.Si + 1.71 * c.Ni + 3.33 * c.Cr + 5.19 * np.sqrt(c.Mo)
        )
    )


def bainite_factor(c: Composition) -> float:
    """BC of Li et al. (1998)."""
    return float(np.exp(-10.23 + 10.18 * c.C + 0.85 * c.Mn + 0.55 * c.Ni + 0.90 * c.Cr + 0.36 * c.Mo))


@dataclass(frozen=True)
class Kinetics:
    """Per-steel constants of the three reactions: 1/F(T) = g * undercooling^n * exp(-Q/RT)."""

    ferrite_g: float
    pearlite_g: float
    bainite_g: float

    @staticmethod
    def of(c: Composition) -> Kinetics:
        g = c.grain_size
        return Kinetics(
            ferrite_g=2.0 ** (0.41 * g) / ferrite_factor(c),
            pearlite_g=2.0 ** (0.32 * g) / pearlite_factor(c),
            bainite_g=2.0 ** (0.29 * g) / bainite_factor(c),
        )


def arrhenius(temp_c: FloatArray) -> FloatArray:
    return np.asarray(np.exp(-Q_OVER_R / (np.asarray(temp_c) + KELVIN)), dtype=float)


def rates(
    temp_c: FloatArray, crit: dict[str, FloatArray], kin: dict[str, FloatArray]
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """dS/dt of ferrite, pearlite and bainite (1/s), zero above each reaction's start temperature.

    ``crit`` holds per-node arrays ``ac1``, ``ac3``, ``bs``; ``kin`` per-node ``ferrite_g``,
    ``pearlite_g``, ``bainite_g``.
    """
    arr = arrhenius(temp_c)
    under_f = np.maximum(crit["ac3"] - temp_c, 0.0)
    under_p = np.maximum(crit["ac1"] - temp_c, 0.0)
    under_b = np.maximum(crit["bs"] - temp_c, 0.0)
    return (
        kin["ferrite_g"] * under_f**3 * arr,
        kin["pearlite_g"] * under_p**3 * arr,
        kin["bainite_g"] * under_b**2 * arr,
    )


def start_time_s(kind: str, temp_c: float, c: Composition, crit: Critical, fraction: float = 0.01) -> float:
    """Isothermal time (s) for ``fraction`` of a reaction at ``temp_c`` (inf above its start)."""
    k = Kinetics.of(c)
    under, g, n = {
        "ferrite": (crit.ac3 - temp_c, k.ferrite_g, 3),
        "pearlite": (crit.ac1 - temp_c, k.pearlite_g, 3),
        "bainite": (crit.bs - temp_c, k.bainite_g, 2),
    }[kind]
    if under <= 0.0:
        return float("inf")
    rate = g * under**n * float(arrhenius(np.asarray(temp_c)))
    return float(progress_integral(np.asarray(fraction))) / rate


_EXP = 5.0 / 3.0  # x = u^(5/3) near each end makes the integrand of S smooth


@cache
def _table(points: int = 400) -> tuple[FloatArray, FloatArray]:
    """X and S(X) on a grid clustered at both ends (Gauss-Legendre on each interval of u)."""
    half = 0.5 ** (1.0 / _EXP)
    u = np.linspace(0.0, half, points + 1)
    gx, gw = np.polynomial.legendre.leggauss(8)

    def integrand(x: FloatArray) -> FloatArray:
        return np.asarray(x ** (-0.4 * (1.0 - x)) * (1.0 - x) ** (-0.4 * x), dtype=float)

    a, b = u[:-1, None], u[1:, None]
    uu = 0.5 * (b - a) * gx[None, :] + 0.5 * (a + b)
    w = 0.5 * (b - a) * gw[None, :]
    lower_x = uu**_EXP
    lower = np.sum(w * integrand(lower_x) * _EXP * uu ** (_EXP - 1.0), axis=1)
    upper = np.sum(w * integrand(1.0 - lower_x) * _EXP * uu ** (_EXP - 1.0), axis=1)
    x_low = u**_EXP
    s_low = np.concatenate([[0.0], np.cumsum(lower)])
    s_mid = s_low[-1]
    s_up_rev = np.concatenate([[0.0], np.cumsum(upper)])  # from x = 1 down to 0.5
    total = s_mid + s_up_rev[-1]
    x_up = (1.0 - x_low)[::-1]
    s_up = (total - s_up_rev)[::-1]
    x = np.concatenate([x_low, x_up[1:]])
    s = np.concatenate([s_low, s_up[1:]])
    return x, s


def progress_integral(x: FloatArray) -> FloatArray:
    """S(X) of Kirkaldy and Venugopalan's model as recalibrated by Li et al. (1998)."""
    xs, ss = _table()
    return np.asarray(np.interp(x, xs, ss), dtype=float)


def progress(s: FloatArray) -> FloatArray:
    """X for an additivity sum S (the inverse of ``progress_integral``; 1 beyond S(1))."""
    xs, ss = _table()
    return np.asarray(np.interp(s, ss, xs), dtype=float)
