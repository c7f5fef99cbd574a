"""Phases in the 1-D march: a steel with a composition transforms and places its latent heat where and
when it does; a steel without one keeps the single enthalpy curve, unchanged."""

from __future__ import annotations

import numpy as np
import pytest

from models import catalog
from tests.phases.steels import grade
from workers.convert import to_material
from workers.thermal import Curve, Face, PartThermal, Shape, Step, Tolerance, simulate
from workers.thermal.layout import Layout
from workers.thermal.phases import critical_temperatures
from workers.thermal.phases.carried import base_material
from workers.thermal.plan import Method, methods_of
from workers.thermal.properties import integral


def _oil() -> Face:
    med = catalog.get_medium("oil-agitated")
    return Face(Curve(tuple(med.htc.temp_c), tuple(med.htc.value)))


def _part(name: str, kind: str, half: float, initial: float, phases: bool) -> PartThermal:
    m = to_material(catalog.get_material(name))
    return PartThermal(Shape(kind, (half,)), m, initial, grade(name) if phases else None)  # type: ignore[arg-type]


def _quench(seconds: float = 900.0) -> Step:
    return Step(duration_s=seconds, ambient_c=40.0, face=_oil())


def test_a_steel_without_composition_keeps_the_single_curve_beside_one_with_phases() -> None:
    """The same bar with no composition gives the same trace alone and in a batch with a steel whose
    phases are followed, and no phases; with its composition the core cools through 700 degC sooner
    (no latent heat at 735 degC on cooling: the issue's independent solve, 4140 in agitated oil)."""
    plain = _part("4140", "bar", 0.025, 850.0, phases=False)
    alone = simulate([plain], [_quench()], samples_per_step=300)[0]
    mixed = simulate(
        [plain, _part("4140", "bar", 0.025, 850.0, phases=True)], [_quench()], samples_per_step=300
    )
    assert alone.phases is None and mixed[0].phases is None
    assert np.max(np.abs(mixed[0].core_c - alone.core_c)) < 0.05
    assert mixed[1].phases is not None
    t700 = [float(np.interp(-700.0, -tr.core_c, tr.time_s)) for tr in (alone, mixed[1])]
    assert t700[1] < t700[0] - 5.0


def test_energy_over_a_quench_with_phases() -> None:
    """Heat out through the faces equals the enthalpy change of the phases: rho (h_base(T_end) -
    h_base(T_0)) + rho L (a_end - a_0), a small bar quenched to a uniform end (the march's heat in
    against the stored enthalpy, as the energy checks of the single curve do)."""
    p = _part("4140", "bar", 0.008, 850.0, phases=True)
    tr = simulate([p], [_quench(1200.0)], samples_per_step=60)[0]
    assert tr.phases is not None
    base, latent = base_material(p.material)
    rho = p.material.density
    a_end = float(tr.phases.core[-1, 0])
    assert abs(tr.core_c[-1] - tr.surface_c[-1]) < 0.05  # uniform: the mean stands for every node
    assert abs(a_end - float(tr.phases.surface[-1, 0])) < 1e-3
    stored = rho * (
        float(integral(base.specific_heat, np.array(tr.mean_c[-1])))
        - float(integral(base.specific_heat, np.array(850.0)))
    ) + rho * latent * (a_end - 1.0)
    assert tr.heat_in_j_m3[-1] == pytest.approx(stored, rel=1e-4)  # measured 2e-6
    assert latent > 70e3  # J/kg (latent.py: about 86 kJ/kg)


def test_the_limit_on_austenite_change_per_step_converges() -> None:
    """Halving and quartering ``phase_change`` moves the core's crossing of 700 and 300 degC by under
    1 s and its fractions by under 0.02: the splitting error is controlled."""
    p = _part("4140", "bar", 0.02, 850.0, phases=True)
    out = []
    for limit in (0.05, 0.0125):
        tr = simulate([p], [_quench(600.0)], samples_per_step=600, tol=Tolerance(phase_change=limit))[0]
        assert tr.phases is not None
        times = [float(np.interp(-x, -tr.core_c, tr.time_s)) for x in (700.0, 300.0)]
        out.append((times, tr.phases.core[-1]))
    assert out[0][0] == pytest.approx(out[1][0], abs=1.0)
    assert np.max(np.abs(out[0][1] - out[1][1])) < 0.02


def test_heating_forms_austenite_between_ac1_and_ac3_and_quench_makes_martensite() -> None:
    """A thin 4140 plate heated through Ac1-Ac3 (Andrews) in a furnace is all austenite after the soak,
    the quench turns it to martensite (KM below Ms), and the heating trace keeps close to the single
    curve's (the same latent heat, taken at Ac1-Ac3 instead of the EN 1993-1-2 peak)."""
    furnace = Face(Curve.constant(30.0), emissivity=0.8)
    heat = Step(duration_s=3600.0, ambient_c=870.0, face=furnace)
    steps = [heat, Step(duration_s=600.0, ambient_c=40.0, face=Face(Curve.constant(3000.0)))]
    with_ph, without = (
        simulate([_part("4140", "plate", 0.005, 20.0, phases=ph)], steps, samples_per_step=240)[0]
        for ph in (True, False)
    )
    assert with_ph.phases is not None
    assert with_ph.phases.core[0, 0] == pytest.approx(1.0)
    assert with_ph.phases.core[1, 4] > 0.9  # martensite
    assert np.isfinite(with_ph.phases.core_rate700[1]) and np.isnan(with_ph.phases.core_rate700[0])
    crit = critical_temperatures(grade("4140"))
    heating = with_ph.step_index == 0
    lag = np.max(np.abs(with_ph.core_c[heating] - without.core_c[heating]))
    assert lag < 60.0, (lag, crit)


def test_plan_marches_a_steel_with_phases_at_every_step_and_solids_keep_the_curve() -> None:
    """Linear steps (constant h, constant properties) of a part with a composition are marched too; a
    block with a composition keeps its methods (README, Known limits)."""
    const = PartThermal(
        Shape("plate", (0.01,)),
        to_material(catalog.get_material("4140")).__class__(
            Curve.constant(40.0), 7850.0, Curve.constant(500.0)
        ),
        850.0,
        grade("4140"),
    )
    linear = Step(duration_s=60.0, ambient_c=40.0, face=Face(Curve.constant(500.0)))
    assert methods_of(Layout.PLATE, const, [linear]) == (Method.LINE,)
    block = PartThermal(Shape("block", (0.01, 0.02, 0.03)), const.material, 850.0, grade("4140"))
    assert methods_of(Layout.BLOCK, block, [linear]) == (Method.SERIES,)
