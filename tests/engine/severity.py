"""Effective quench severity of a catalog medium: the Grossmann H the engine produces for a standard bar.

Grossmann's H = h / (2k) (1/inch) describes a medium by the one constant h that hardens a bar like the
medium does. Here the measure is the time the centre of a 1 in (25.4 mm) round bar takes to fall half way
from 850 degC to the bath: the engine computes it with the medium's h(T_surface) curve, and scipy's
exact series for a bar with constant h (roots of lam J1(lam) = Bi J0(lam)) gives the constant h with the
same half time. The bar is austenite, as a quenched bar is until it transforms: k 27.3 W/m/K and cp
650 J/kg/K (read: EN 1993-1-2, section 3.4, above 800 and 900 degC), density 7850 kg/m^3 (from memory).

``python -m tests.engine.severity`` prints the ranking table.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq
from scipy.special import j0, j1, jn_zeros

from models import Medium, get_medium
from workers.thermal import Curve, Face, Material, PartThermal, Shape, Step, simulate

K_W_MK = 27.3  # read: EN 1993-1-2, k above 800 degC
CP_J_KGK = 650.0  # read: EN 1993-1-2, cp from 900 degC
RHO_KG_M3 = 7850.0  # from memory
RADIUS_M = 0.0254 / 2.0
ALPHA_M2_S = K_W_MK / (RHO_KG_M3 * CP_J_KGK)
START_C = 850.0
BATH_C = 40.0
INCH_M = 0.0254
SAMPLES = 600


@dataclass(frozen=True)
class Severity:
    medium: str
    half_time_s: float
    h_w_m2k: float  # the constant h with the same half time

    @property
    def grossmann_h(self) -> float:
        """H = h / (2k) in 1/inch."""
        return self.h_w_m2k / (2.0 * K_W_MK) * INCH_M


def _bar_roots(biot: float, count: int = 30) -> np.ndarray:
    zeros0 = jn_zeros(0, count)
    zeros1 = np.concatenate([[0.0], jn_zeros(1, count - 1)])
    return np.array(
        [
            brentq(lambda x: x * j1(x) - biot * j0(x), zeros1[i] + 1e-12, zeros0[i], xtol=1e-14)
            for i in range(count)
        ]
    )


def _series(biot: float) -> tuple[np.ndarray, np.ndarray]:
    lam = _bar_roots(biot)
    return lam, 2.0 * j1(lam) / (lam * (j0(lam) ** 2 + j1(lam) ** 2))


def centre_fraction(biot: float, fourier: float) -> float:
    """(T_centre - T_bath) / (T_start - T_bath) of a bar with constant h: the exact series."""
    lam, coeff = _series(biot)
    return float(np.sum(coeff * np.exp(-(lam**2) * fourier)))


def half_fourier(biot: float) -> float:
    """Fourier number at which the centre of a constant-h bar is half way to the bath."""
    lam, coeff = _series(biot)
    return float(brentq(lambda fo: np.sum(coeff * np.exp(-(lam**2) * fo)) - 0.5, 1e-5, 1e5, xtol=1e-12))


def equivalent_h(half_time_s: float) -> float:
    """The constant h (W/m^2/K) whose exact series gives this half time."""
    target = ALPHA_M2_S * half_time_s / RADIUS_M**2
    log_bi = brentq(lambda lb: half_fourier(math.exp(lb)) - target, math.log(1e-5), math.log(1e4), xtol=1e-10)
    return math.exp(log_bi) * K_W_MK / RADIUS_M


def engine_half_time(medium: Medium) -> float:
    """Seconds for the engine's bar centre to fall half way, in ``medium`` at the bath temperature."""
    face = Face(Curve(tuple(medium.htc.temp_c), tuple(medium.htc.value)), medium.emissivity or 0.0)
    material = Material(Curve.constant(K_W_MK), RHO_KG_M3, Curve.constant(CP_J_KGK))
    part = PartThermal(Shape("bar", (RADIUS_M,)), material, START_C)
    half = 0.5 * (START_C + BATH_C)
    duration = 60.0
    while True:
        trace = simulate([part], [Step(duration, BATH_C, face)], samples_per_step=SAMPLES)[0]
        below = np.nonzero(trace.core_c < half)[0]
        if below.size:
            i = int(below[0])
            t0, t1, c0, c1 = trace.time_s[i - 1], trace.time_s[i], trace.core_c[i - 1], trace.core_c[i]
            return float(t0 + (half - c0) / (c1 - c0) * (t1 - t0))
        duration *= 4.0


def severity(name: str) -> Severity:
    medium = get_medium(name)
    half = engine_half_time(medium)
    return Severity(medium.name, half, equivalent_h(half))


if __name__ == "__main__":  # the ranking table of the issue note
    RANKING = ("brine", "water", "polymer", "oil-agitated", "oil-still", "air-forced", "air-still")
    print("| medium | half time (s) | equivalent h (W/m^2/K) | effective H (1/in) | handbook range |")
    print("|---|---|---|---|---|")
    for medium_name in RANKING:
        found = severity(medium_name)
        low, high = get_medium(medium_name).grossmann_h or (math.nan, math.nan)
        print(
            f"| {medium_name} | {found.half_time_s:.1f} | {found.h_w_m2k:.0f} | "
            f"{found.grossmann_h:.3f} | {low:g}-{high:g} |"
        )
