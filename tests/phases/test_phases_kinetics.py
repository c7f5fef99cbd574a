"""Decomposition of austenite: the additivity rule over Kirkaldy and Venugopalan's kinetics, martensite
by Koistinen and Marburger, heating to austenite, checked against published figures and trends."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad

from tests.phases.steels import cool_at, grade
from workers.thermal.phases import Transformer, critical_temperatures, koistinen_marburger
from workers.thermal.phases.kinetics import progress, progress_integral, start_time_s
from workers.thermal.phases.transform import A, B, F, M, P


def test_progress_integral_against_scipy() -> None:
    """S(X) of the model against scipy's adaptive quadrature (computed with scipy), and its inverse."""
    for x in (1e-3, 0.01, 0.1, 0.5, 0.9, 0.99, 1.0):
        ref = quad(lambda t: t ** (-0.4 * (1 - t)) * (1 - t) ** (-0.4 * t), 0.0, x, limit=200)[0]
        assert float(progress_integral(np.array(x))) == pytest.approx(ref, rel=1e-3)
        assert float(progress(progress_integral(np.array(x)))) == pytest.approx(x, rel=2e-3)


def test_koistinen_marburger_constant() -> None:
    """f = 1 - exp(-0.011 (Ms - T)) (read: Koistinen and Marburger, Acta Metall. 7 (1959) 59): half of
    the austenite at 63 K below Ms, 90 % at 209 K, in the march's athermal form as well."""
    assert float(koistinen_marburger(np.log(2) / 0.011)) == pytest.approx(0.5, abs=1e-12)
    assert float(koistinen_marburger(209.3)) == pytest.approx(0.9, abs=1e-3)
    c = grade("4140")
    ms = critical_temperatures(c).ms
    tr = Transformer.for_nodes([c], [0])
    state = tr.initial(1.0)
    for temp in np.linspace(ms + 5, ms - 100, 50):  # fast enough that nothing diffusional forms
        state = tr.advance(state, np.array([temp]), 0.005)
    # a trace of bainite (below 1e-5) forms in the 0.005 s above Ms
    assert state.frac[M, 0] == pytest.approx(float(koistinen_marburger(100.0)), abs=1e-5)
    held = tr.advance(state, np.array([ms - 100]), 3600.0)  # athermal: holding adds nothing
    assert held.frac[M, 0] == pytest.approx(state.frac[M, 0], abs=1e-12)


def test_retained_austenite_of_quenched_4140() -> None:
    """Fully quenched 4140 keeps a few % of austenite at room temperature (from memory: 2-5 % measured
    in as-quenched medium-carbon low-alloy steels)."""
    state = cool_at(grade("4140"), [200.0])
    assert 0.02 <= state.frac[A, 0] <= 0.05


def _diffusional(frac: np.ndarray) -> np.ndarray:
    return np.asarray(frac[F] + frac[P] + frac[B])


def test_critical_cooling_rates() -> None:
    """Critical cooling rates for martensite (read: Callister, continuous-cooling figures): eutectoid
    plain carbon about 140 degC/s, 4340 about 8.3 degC/s. At those rates at most 10 % of the austenite
    goes to diffusional products; ten times slower, most of the eutectoid steel does."""
    eutectoid = grade("1045").with_(C=0.77)
    fast, slow = _diffusional(cool_at(eutectoid, [140.0, 14.0]).frac)
    assert fast <= 0.10 and slow >= 0.5
    assert _diffusional(cool_at(grade("4340"), [8.3]).frac)[0] <= 0.10


def test_slow_cooling_gives_the_lever_rule() -> None:
    """A hypoeutectoid steel cooled slowly (0.05 K/s, a furnace cool) ends as proeutectoid ferrite in
    its lever-rule share and pearlite (common practice: annealed 1045 is about 40 % ferrite)."""
    c = grade("1045")
    frac = cool_at(c, [0.05]).frac[:, 0]
    assert frac[F] == pytest.approx(critical_temperatures(c).ferrite, abs=0.03)
    assert frac[F] + frac[P] == pytest.approx(1.0, abs=1e-6)


def test_more_alloy_slower_cooling_and_coarser_grain() -> None:
    """Trends: at one cooling rate more of any hardening element gives more martensite, a finer grain
    less (common practice; Grossmann's factors and grain-size effect)."""
    base = grade("1045")
    rate = [60.0]
    m0 = cool_at(base, rate).frac[M, 0]
    for element, more in (("Mn", 1.2), ("Cr", 0.5), ("Mo", 0.2), ("Ni", 1.0), ("C", 0.55)):
        assert cool_at(base.with_(**{element: more}), rate).frac[M, 0] > m0 + 0.02, element
    assert cool_at(base.with_(grain_size=9.0), rate).frac[M, 0] < m0
    fractions = cool_at(grade("4140"), [100.0, 30.0, 10.0, 3.0, 1.0, 0.3]).frac[M]
    assert np.all(np.diff(fractions) <= 1e-12)
    assert fractions[0] > 0.9 and fractions[-1] < 0.05


def test_additivity_reduces_to_the_isothermal_start() -> None:
    """Held between Ac1 and Ac3, the additivity sum reaches 1 % of the equilibrium ferrite at the
    model's isothermal time (a consistency check of the integration, computed)."""
    c = grade("4140")
    crit = critical_temperatures(c)
    hold = 760.0
    t1 = start_time_s("ferrite", hold, c, crit)
    tr = Transformer.for_nodes([c], [0])
    state = tr.advance(tr.initial(1.0), np.array([hold]), t1)
    feq = crit.ferrite * (crit.ac3 - hold) / (crit.ac3 - crit.ac1)
    assert crit.ac1 < hold < crit.ac3
    assert state.frac[F, 0] == pytest.approx(0.01 * feq, rel=1e-3)


def test_heating_forms_austenite_between_ac1_and_ac3() -> None:
    c = grade("4140")
    crit = critical_temperatures(c)
    tr = Transformer.for_nodes([c], [0])
    state = tr.initial()
    mid = 0.5 * (crit.ac1 + crit.ac3)
    for temp, expected in ((crit.ac1 - 5, 0.0), (mid, 0.5), (crit.ac3 + 5, 1.0)):
        state = tr.advance(state, np.array([temp]), 60.0)
        assert state.frac[A, 0] == pytest.approx(expected, abs=1e-9)
        assert state.frac[:, 0].sum() == pytest.approx(1.0, abs=1e-12)


def test_fractions_stay_whole_through_cycles() -> None:
    """Through random heating and cooling every node's fractions stay in [0, 1] and sum to 1."""
    rng = np.random.default_rng(7)
    steels = [grade("4140"), grade("1045"), grade("4340")]
    tr = Transformer.for_nodes(steels, [0, 1, 2] * 20)
    state = tr.initial()
    temp = np.full(60, 20.0)
    for _ in range(400):
        temp = np.clip(temp + rng.normal(0.0, 40.0, 60), 20.0, 900.0)
        state = tr.advance(state, temp, float(rng.uniform(0.1, 30.0)))
        assert np.all(state.frac >= 0.0) and np.all(state.frac <= 1.0)
        assert np.allclose(state.frac.sum(axis=0), 1.0, atol=1e-9)
