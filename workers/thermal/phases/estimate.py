"""The as-quenched estimate at one point: phase fractions grouped as a hardness tester reads them, and
the hardness (HV) by Maynier's equations from those fractions and the point's cooling rate at 700 degC.

Pure: the fractions and rate come from a march that followed the phases (``spec.PhaseTrace``), the
composition from the part. Conversion to HRC is done by the caller (a catalog table, ASTM E140).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from workers.thermal.phases.composition import Composition
from workers.thermal.phases.critical import critical_temperatures
from workers.thermal.phases.hardness import maynier_hv
from workers.thermal.phases.transform import A, B, F, M, P
from workers.thermal.spec import FloatArray

# Austenite left above Ms at a step's end (as a fraction) below which the structure counts as settled.
SETTLED_AUSTENITE = 0.01


@dataclass(frozen=True)
class PointEstimate:
    """Fractions (0-1) at one point at one instant, the cooling rate where it last fell through 700 degC
    (K/s, None if it has not since it was last austenite), the hardness (HV, None without that rate) and
    ``unsettled``: austenite still above Ms (the point has not finished transforming)."""

    martensite: float
    bainite: float
    ferrite_pearlite: float
    austenite: float
    rate700_k_s: float | None
    hv: float | None
    temp_c: float
    ms_c: float
    unsettled: bool


def point_estimate(steel: Composition, frac: FloatArray, rate700: float, temp_c: float) -> PointEstimate:
    """The estimate from one point's fractions ``frac`` (5,) by ``transform.PHASES``, its rate at 700 degC
    (K/s, nan when it has not cooled through 700 degC) and its temperature at that instant (degC)."""
    f = np.asarray(frac, dtype=float)
    ms = critical_temperatures(steel).ms
    rate = float(rate700) if math.isfinite(rate700) else None
    aus = float(f[A])
    hv = None
    if rate is not None:
        hv = maynier_hv(steel, rate, float(f[M]), float(f[B]), float(f[F] + f[P]), aus).mixture
    return PointEstimate(
        martensite=float(f[M]),
        bainite=float(f[B]),
        ferrite_pearlite=float(f[F] + f[P]),
        austenite=aus,
        rate700_k_s=rate,
        hv=hv,
        temp_c=float(temp_c),
        ms_c=float(ms),
        unsettled=aus > SETTLED_AUSTENITE and temp_c > ms,
    )
