"""Phases joined to heat: energy kept to round-off, latent heat released where austenite decomposes."""

from __future__ import annotations

import numpy as np
import pytest

from models import catalog
from tests.phases.steels import grade
from workers.convert import to_material
from workers.thermal.phases import critical_temperatures
from workers.thermal.phases.coupling import Coupling, Steel


def _steel(name: str) -> Steel:
    m = to_material(catalog.get_material(name))
    return Steel(grade(name), m.density, m.specific_heat)


def test_isolated_nodes_keep_their_enthalpy_through_the_transformation() -> None:
    """Nodes held without exchange (adiabatic) through decomposition: their enthalpy does not change,
    and the heat released warms them by L / cp of the share that transformed (recalescence)."""
    coupling = Coupling([_steel("4140"), _steel("1045")], [0, 1, 0, 1])
    state = coupling.transformer.initial(1.0)
    temp = np.array([640.0, 640.0, 300.0, 250.0])  # ferrite and pearlite; 4140 and 1045 below Ms
    h0 = coupling.enthalpy(temp, state)
    for _ in range(200):
        state, temp = coupling.settle(state, temp, 5.0)
    assert coupling.enthalpy(temp, state) == pytest.approx(h0, rel=1e-9)
    assert np.all(state.austenite < 0.5)
    assert np.all(temp[:2] > 640.0 + 40.0)  # about 86 kJ/kg over ~700 J/kg/K


def test_heating_absorbs_the_latent_heat_between_ac1_and_ac3() -> None:
    """Heat given to a node across Ac1-Ac3 goes partly into austenite: the temperature rise lags the
    base curve by L / cp, and the total heat equals the single curve's enthalpy difference."""
    s = _steel("4140")
    coupling = Coupling([s], [0])
    crit = critical_temperatures(s.composition)
    state = coupling.transformer.initial()
    temp = np.array([crit.ac1 - 1.0])
    target_h = coupling.enthalpy(np.array([crit.ac3 + 20.0]), coupling.transformer.initial(1.0))
    h = coupling.enthalpy(temp, state)
    heat = (target_h - h) / 100
    for _ in range(100):  # heat in 100 equal parcels at constant enthalpy per parcel
        h_base = coupling.base_enthalpy(temp) + heat / coupling.rho
        temp = coupling.temperature(h_base)
        state, temp = coupling.settle(state, temp, 10.0)
    assert state.austenite[0] == pytest.approx(1.0)
    assert temp[0] == pytest.approx(crit.ac3 + 20.0, abs=0.5)
