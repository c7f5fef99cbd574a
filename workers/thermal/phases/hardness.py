"""As-quenched hardness (HV) from phase fractions and the cooling rate at 700 degC: Maynier's equations.

P. Maynier, B. Jungmann and J. Dollet, "Creusot-Loire system for the prediction of the mechanical
properties of low alloy steel products", in Hardenability Concepts with Applications to Steel, AIME
(1978) 518-545 (from memory), with Vr the cooling rate at 700 degC in K/h:

    HV_martensite = 127 + 949 C + 27 Si + 11 Mn + 8 Ni + 16 Cr + 21 log Vr
    HV_bainite    = -323 + 185 C + 330 Si + 153 Mn + 65 Ni + 144 Cr + 191 Mo
                    + (89 + 53 C - 55 Si - 22 Mn - 10 Ni - 20 Cr - 33 Mo) log Vr
    HV_ferrite+pearlite = 42 + 223 C + 53 Si + 30 Mn + 12.6 Ni + 7 Cr + 19 Mo
                    + (10 - 19 Si + 4 Ni + 8 Cr + 130 V) log Vr

and the hardness of a mixture is the sum over phases weighted by fraction. Austenite left at room
temperature (a few % after Koistinen-Marburger) is counted with martensite: Maynier's martensite was
fitted on as-quenched structures that hold it. Conversion to HRC (ASTM E140) is done at the edges, from
the models catalog.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from workers.thermal.phases.composition import Composition
from workers.thermal.spec import FloatArray

RATE_AT_C = 700.0


@dataclass(frozen=True)
class Hardness:
    """Hardness (HV) of each product at one cooling rate, and of the mixture."""

    martensite: float
    bainite: float
    ferrite_pearlite: float
    mixture: float


def maynier_hv(
    c: Composition,
    rate_k_s: float,
    martensite: float,
    bainite: float,
    ferrite_pearlite: float,
    austenite: float = 0.0,
) -> Hardness:
    """Maynier's hardness for fractions of martensite, bainite and ferrite+pearlite, with austenite
    counted as martensite, at ``rate_k_s`` (K/s) at 700 degC."""
    log_vr = math.log10(max(rate_k_s, 1e-6) * 3600.0)
    hv_m = 127 + 949 * c.C + 27 * c.Si + 11 * c.Mn + 8 * c.Ni + 16 * c.Cr + 21 * log_vr
    hv_b = (
        -323
        + 185 * c.C
        + 330 * c.Si
        + 153 * c.Mn
        + 65 * c.Ni
        + 144 * c.Cr
        + 191 * c.Mo
        + (89 + 53 * c.C - 55 * c.Si - 22 * c.Mn - 10 * c.Ni - 20 * c.Cr - 33 * c.Mo) * log_vr
    )
    hv_fp = (
        42
        + 223 * c.C
        + 53 * c.Si
        + 30 * c.Mn
        + 12.6 * c.Ni
        + 7 * c.Cr
        + 19 * c.Mo
        + (10 - 19 * c.Si + 4 * c.Ni + 8 * c.Cr + 130 * c.V) * log_vr
    )
    total = martensite + austenite + bainite + ferrite_pearlite
    mix = ((martensite + austenite) * hv_m + bainite * hv_b + ferrite_pearlite * hv_fp) / max(total, 1e-12)
    return Hardness(martensite=hv_m, bainite=hv_b, ferrite_pearlite=hv_fp, mixture=mix)


def rate_at_700(time_s: FloatArray, temp_c: FloatArray) -> float | None:
    """Cooling rate (K/s, positive) where a sampled history last falls through 700 degC, or None when it
    never does. Linear between the two samples either side of the crossing."""
    t = np.asarray(time_s, dtype=float)
    temp = np.asarray(temp_c, dtype=float)
    down = np.nonzero((temp[:-1] >= RATE_AT_C) & (temp[1:] < RATE_AT_C))[0]
    if down.size == 0:
        return None
    i = int(down[-1])
    dt = t[i + 1] - t[i]
    return float((temp[i] - temp[i + 1]) / dt) if dt > 0.0 else None
