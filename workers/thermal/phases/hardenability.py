"""ASTM A255 hardenability from composition: ideal critical diameter DI and the hardness of martensite.

DI (inches) = DI_carbon(C, grain size 7) x f_Mn x f_Si x f_Ni x f_Cr x f_Mo x f_Cu x f_V, with the
standard's equations of its multiplying-factor tables (ASTM A255, calculation of hardenability; the
equations from memory):

    carbon, grain size 7: 0.54 C (C <= 0.39); 0.171 + 0.001 C + 0.265 C^2 (0.40-0.55);
        0.115 + 0.268 C - 0.038 C^2 (0.56-0.65); 0.143 + 0.2 C (0.66-0.75);
        0.062 + 0.409 C - 0.135 C^2 (0.76-0.90)
    Mn: 1 + 3.3333 Mn (up to 1.20), 5.10 Mn - 1.12 (1.20-1.95); Si: 1 + 0.7 Si; Ni: 1 + 0.363 Ni;
    Cr: 1 + 2.16 Cr; Mo: 1 + 3.00 Mo; Cu: 1 + 0.365 Cu; V: 1 + 1.73 V

and the initial hardness of the end-quench curve (fully martensitic, HRC) against carbon:
IH = 35.395 + 6.990 C + 312.330 C^2 - 821.744 C^3 + 1015.479 C^4 - 538.346 C^5 (same standard, from
memory). The standard's factors are for grain size 7 only; boron is not counted here.
"""

from __future__ import annotations

from workers.thermal.phases.composition import Composition

MM_PER_IN = 25.4


def carbon_factor(carbon: float) -> float:
    """DI of the carbon alone at grain size 7 (inches)."""
    c = carbon
    if c <= 0.395:
        return 0.54 * c
    if c <= 0.555:
        return 0.171 + 0.001 * c + 0.265 * c * c
    if c <= 0.655:
        return 0.115 + 0.268 * c - 0.038 * c * c
    if c <= 0.755:
        return 0.143 + 0.2 * c
    return 0.062 + 0.409 * c - 0.135 * c * c


def multiplying_factors(c: Composition) -> dict[str, float]:
    """The alloy multiplying factors of ASTM A255 by element."""
    mn = 1.0 + 3.3333 * c.Mn if c.Mn <= 1.20 else 5.10 * c.Mn - 1.12
    return {
        "Mn": mn,
        "Si": 1.0 + 0.7 * c.Si,
        "Ni": 1.0 + 0.363 * c.Ni,
        "Cr": 1.0 + 2.16 * c.Cr,
        "Mo": 1.0 + 3.00 * c.Mo,
        "Cu": 1.0 + 0.365 * c.Cu,
        "V": 1.0 + 1.73 * c.V,
    }


def ideal_diameter_in(c: Composition) -> float:
    """DI in inches (ASTM A255 multiplying factors, grain size 7)."""
    di = carbon_factor(c.C)
    for factor in multiplying_factors(c).values():
        di *= factor
    return di


def martensite_hrc(carbon: float) -> float:
    """Initial (fully martensitic) hardness of the end-quench curve, HRC, against carbon (ASTM A255)."""
    c = carbon
    return 35.395 + 6.990 * c + 312.330 * c**2 - 821.744 * c**3 + 1015.479 * c**4 - 538.346 * c**5
