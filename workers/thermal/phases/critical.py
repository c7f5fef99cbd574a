"""Transformation temperatures of a steel from its composition (degC), and its equilibrium ferrite.

- Ac1 and Ac3: K. W. Andrews, "Empirical formulae for the calculation of some transformation
  temperatures", J. Iron Steel Inst. 203 (1965) 721-727. Andrews gives Ac3 in a short form and in a
  long one with further terms (-30 Mn - 11 Cr - 20 Cu ...); the short form is used here: against the
  published critical temperatures of the catalog grades it is within 10 K where the long one is 20-40 K
  low (tests/engine/test_phases_critical.py). The same two temperatures bound the equilibrium ferrite of
  the decomposition model, as Kirkaldy and Venugopalan used Andrews's formulae.
- Ms: Andrews's linear formula (same paper).
- Bs: J. S. Kirkaldy and D. Venugopalan, "Prediction of microstructure and hardenability in low alloy
  steels", in Phase Transformations in Ferrous Alloys, AIME (1984) 125-148.
- Equilibrium ferrite: the lever rule of the Fe-C diagram between the ferrite solubility and the
  eutectoid carbon, taken linear in temperature between Ac3 (no ferrite) and Ac1 (all of it).

Validity ranges of each formula are in the models catalog (``phase_methods.yaml``) with their sources.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from workers.thermal.phases.composition import Composition

EUTECTOID_C = 0.77  # mass %, Fe-C eutectoid (from memory: 0.76-0.77 in the diagrams)
FERRITE_C = 0.02  # mass %, carbon of ferrite at the eutectoid temperature (from memory)


def ac1_c(c: Composition) -> float:
    """Lower critical temperature (Andrews 1965)."""
    return 723.0 - 10.7 * c.Mn - 16.9 * c.Ni + 29.1 * c.Si + 16.9 * c.Cr


def ac3_c(c: Composition) -> float:
    """Upper critical temperature (Andrews 1965, short form)."""
    return 910.0 - 203.0 * math.sqrt(c.C) - 15.2 * c.Ni + 44.7 * c.Si + 104.0 * c.V + 31.5 * c.Mo


def ac3_long_c(c: Composition) -> float:
    """Andrews's long form of Ac3 (kept to show why the short one is used; see the module docstring)."""
    return ac3_c(c) - 30.0 * c.Mn - 11.0 * c.Cr - 20.0 * c.Cu


def ms_c(c: Composition) -> float:
    """Martensite start (Andrews 1965, linear)."""
    return 539.0 - 423.0 * c.C - 30.4 * c.Mn - 17.7 * c.Ni - 12.1 * c.Cr - 7.5 * c.Mo


def bs_c(c: Composition) -> float:
    """Bainite start (Kirkaldy and Venugopalan 1984)."""
    return 656.0 - 57.7 * c.C - 75.0 * c.Si - 35.0 * c.Mn - 15.3 * c.Ni - 34.0 * c.Cr - 41.2 * c.Mo


def ferrite_max(c: Composition) -> float:
    """Fraction of proeutectoid ferrite at Ac1 by the lever rule (0 for eutectoid and higher carbon)."""
    return min(max((EUTECTOID_C - c.C) / (EUTECTOID_C - FERRITE_C), 0.0), 1.0)


@dataclass(frozen=True)
class Critical:
    """The temperatures of one steel (degC) and its proeutectoid ferrite at Ac1."""

    ac1: float
    ac3: float
    ms: float
    bs: float
    ferrite: float

    def austenite_equilibrium(self, temp_c: float) -> float:
        """Austenite fraction on slow heating: none below Ac1, all above Ac3, linear between."""
        return min(max((temp_c - self.ac1) / (self.ac3 - self.ac1), 0.0), 1.0)


def critical_temperatures(c: Composition) -> Critical:
    """Ac1, Ac3, Ms, Bs and the ferrite at Ac1 of a steel.

    Ac3 is kept above Ac1 by at least 1 K (a composition far outside the formulas' range could
    otherwise reverse them) and Bs at or below Ac1 (bainite forms from undercooled austenite).
    """
    ac1 = ac1_c(c)
    ac3 = max(ac3_c(c), ac1 + 1.0)
    return Critical(ac1=ac1, ac3=ac3, ms=ms_c(c), bs=min(bs_c(c), ac1), ferrite=ferrite_max(c))
