"""The latent heat cut out of a catalog steel's specific-heat curve, and the enthalpy it keeps."""

from __future__ import annotations

import numpy as np
import pytest

from models import catalog
from workers.convert import to_material
from workers.thermal.phases.latent import split_latent
from workers.thermal.properties import integral
from workers.thermal.spec import Curve


def test_latent_heat_of_the_catalog_steels() -> None:
    """L of the EN 1993-1-2 peak, about 85 kJ/kg, against the calorimetric enthalpy of the
    austenite-pearlite change of a eutectoid steel, 19.6 cal/g = 82 J/g (read: Hagel, Pound and Mehl,
    "Calorimetric study of the austenite:pearlite transformation", its abstract): within 15 %."""
    for name in ("plain-carbon", "1045", "4140", "4340"):
        base, latent = split_latent(to_material(catalog.get_material(name)).specific_heat)
        assert latent == pytest.approx(82e3, rel=0.15), name
        assert max(base.value) < 1000.0  # the peak is gone


def test_enthalpy_is_kept_outside_the_window() -> None:
    """int cp dT of the single curve = int cp_base dT + L at every temperature above the window, and
    the same below it (energy is neither made nor lost by the split)."""
    cp = to_material(catalog.get_material("4140")).specific_heat
    base, latent = split_latent(cp)
    for temp in (20.0, 500.0, 600.0):
        single = float(integral(cp, np.array(temp)))
        assert float(integral(base, np.array(temp))) == pytest.approx(single, rel=1e-9)
    for temp in (900.0, 1000.0, 1200.0):
        assert float(integral(base, np.array(temp))) + latent == pytest.approx(
            float(integral(cp, np.array(temp))), rel=1e-9
        )


def test_a_curve_without_a_peak_has_no_latent_heat() -> None:
    flat = Curve.constant(600.0)
    assert split_latent(flat) == (flat, 0.0)
    stainless = to_material(catalog.get_material("304")).specific_heat
    assert split_latent(stainless)[1] == 0.0
