"""Limiting cases with closed forms: the worked shaft example, lumped bodies, the semi-infinite solid, the
steady wall between two fluids, and the energy balance between stored heat and heat through the faces."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.special import erfcx

from tests.engine.support import record, run_one
from tests.reference import analytic as an
from tests.reference.cases import CR_MO_STEEL, OIL_QUENCH, PLAIN_CARBON, const_face, constant_steel
from workers.thermal import eigen, modes, simulate
from workers.thermal.spec import Face, PartThermal, Shape, ShapeName, Step


def test_worked_shaft_example() -> None:
    # read: Cengel, Heat and Mass Transfer, problem 4-60: stainless 304 shaft, D = 35 cm, 400 C start,
    # 150 C surroundings, h = 60 W/m2K, k = 14.9, rho = 7900, cp = 477, 20 min; one-term answer 390 C
    R, t0, amb, h, k, rho, cp, t = 0.175, 400.0, 150.0, 60.0, 14.9, 7900.0, 477.0, 1200.0
    tr = run_one(
        PartThermal(Shape("bar", (R,)), constant_steel(k, rho, cp), t0), [Step(t, amb, const_face(h))]
    )
    core = float(tr.core_c[-1])
    Bi, tau = h * R / k, k / (rho * cp) * t / R**2
    assert Bi == pytest.approx(0.705, abs=5e-4) and tau == pytest.approx(0.1548, abs=2e-4)
    # computed with scipy: the full series, 400 terms
    series = amb + (t0 - amb) * float(an.bar_theta(Bi, np.array([tau]), 0.0)[0])
    d_series = abs(core - series)
    record("shaft centre vs full series (about 386 C)", "computed with scipy", 2e-3, d_series)
    assert d_series < 2e-3
    assert core == pytest.approx(386.0, abs=1.0)
    # read: Cengel problem 4-60, published one-term answer 390 C, from the engine's own first root
    lam = eigen.bar_roots(np.array([Bi]), 2)
    c1 = float(modes.ones(modes.BesselModes(lam))[0, 0])
    one = amb + (t0 - amb) * c1 * np.exp(-(float(lam[0, 0]) ** 2) * tau)
    record("shaft centre one-term vs published 390 C", "read: Cengel problem 4-60", 0.5, abs(one - 390.0))
    assert one == pytest.approx(390.0, abs=0.5)


@pytest.mark.parametrize("kind", ["plate", "bar"])
def test_lumped_limit_for_small_biot(kind: ShapeName) -> None:
    # from memory: lumped capacitance, theta = theta0 exp(-h A t / (rho c V)), V/A = a (plate), R/2 (bar);
    # the distributed solution departs from it by O(Bi)
    mat = PLAIN_CARBON
    k, rc = 60.5, 7854.0 * 434.0  # read: Incropera, Table A.1 (plain carbon)
    size, t0, amb = 0.005, 860.0, 40.0
    v_over_a = size if kind == "plate" else size / 2
    errs = []
    for Bi in (1e-2, 1e-3, 1e-4):
        h = Bi * k / size
        tc = rc * v_over_a / h
        tr = run_one(
            PartThermal(Shape(kind, (size,)), mat, t0), [Step(3 * tc, amb, const_face(h))], samples=30
        )
        lumped = amb + (t0 - amb) * np.exp(-tr.time_s / tc)
        err = max(np.max(np.abs(tr.core_c - lumped)), np.max(np.abs(tr.surface_c - lumped))) / (t0 - amb)
        record(f"{kind} lumped limit, Bi = {Bi} (relative)", "from memory", Bi, err)
        assert err < Bi, Bi
        errs.append(err)
    # the departure shrinks in proportion to Bi
    assert errs[0] / errs[1] > 5 and errs[1] / errs[2] > 5, errs


K, RHO, CP = 37.7, 7822.0, 444.0  # read: Incropera, Table A.1 (1/2Cr-1/4Mo-Si)
ALPHA = K / (RHO * CP)


def test_semi_infinite_surface_with_convection() -> None:
    # from memory: semi-infinite solid with surface convection, T_s - T_i = (T_inf - T_i)(1 - e^{b^2} erfc b),
    # b = h sqrt(alpha t) / k; a 0.6 m thick plate is semi-infinite for 300 s (erfc(5) at its mid-plane)
    a, h, t0, amb, dur = 0.3, 400.0, 20.0, 860.0, 300.0
    tr = run_one(
        PartThermal(Shape("plate", (a,)), CR_MO_STEEL, t0), [Step(dur, amb, const_face(h))], samples=60
    )
    t = tr.time_s[1:]
    surf = t0 + (amb - t0) * np.array(
        [an.semi_infinite_convective(np.array(0.0), ti, ALPHA, K, h) for ti in t]
    )
    d_surf = np.max(np.abs(tr.surface_c[1:] - surf))
    record("semi-infinite surface, finite h (erfc form)", "from memory", 5e-3, d_surf)
    assert d_surf < 5e-3

    # computed with scipy: heat taken up, the integral of h (T_inf - T_s) = h (T_inf - T_i) erfcx(b)
    def flux(ti: float) -> float:
        return h * (amb - t0) * float(erfcx(h * np.sqrt(ALPHA * ti) / K))

    heat = np.array([quad(flux, 0.0, ti, epsabs=1e-6, epsrel=1e-12)[0] for ti in t])
    mean = t0 + heat / (RHO * CP * a)
    d_mean = np.max(np.abs(tr.mean_c[1:] - mean))
    record("semi-infinite mean (heat taken up), finite h", "computed with scipy", 1e-4, d_mean)
    assert d_mean < 1e-4


def test_semi_infinite_fixed_surface_temperature() -> None:
    # from memory: a step of surface temperature into a semi-infinite solid; heat taken up per area
    # 2 k (T_s - T_i) sqrt(t / (pi alpha)); h = 1e9 W/m2K stands for the fixed surface
    a, t0, amb, dur = 0.3, 20.0, 860.0, 300.0
    tr = run_one(
        PartThermal(Shape("plate", (a,)), CR_MO_STEEL, t0), [Step(dur, amb, const_face(1e9))], samples=60
    )
    t = tr.time_s[1:]
    want = t0 + an.semi_infinite_fixed_heat(t, ALPHA, K) * (amb - t0) / (RHO * CP * a)
    rel = np.max(np.abs((tr.mean_c[1:] - t0) / (want - t0) - 1.0))
    d_surf = np.max(np.abs(tr.surface_c[1:] - amb))
    record("semi-infinite, fixed surface: heat taken up (relative)", "from memory", 1e-4, rel)
    record("semi-infinite, fixed surface: surface temperature", "from memory", 1e-2, d_surf)
    assert rel < 1e-4
    assert d_surf < 1e-2


def test_steady_line_between_two_face_ambients() -> None:
    # from memory: steady plane wall between two fluids, resistances 1/h1 + L/k + 1/h2 in series
    a, h1, h2, amb1, amb2 = 0.01, 50.0, 500.0, 900.0, 20.0
    step = Step(6 * 3600.0, amb1, const_face(h1), second_face=const_face(h2), second_ambient_c=amb2)
    tr = run_one(PartThermal(Shape("plate", (a,)), CR_MO_STEEL, 500.0), [step], samples=10)
    q = (amb1 - amb2) / (1 / h1 + 2 * a / K + 1 / h2)
    ts1, ts2 = amb1 - q / h1, amb2 + q / h2
    assert tr.second_surface_c is not None
    got = np.array([tr.surface_c[-1], tr.second_surface_c[-1], tr.core_c[-1], tr.mean_c[-1]])
    want = np.array([ts1, ts2, 0.5 * (ts1 + ts2), 0.5 * (ts1 + ts2)])
    d = np.max(np.abs(got - want))
    record("two-face plate, steady straight line", "from memory", 1e-3, d)
    assert d < 1e-3, (got, want)


FURNACE = Face(const_face(25.0).htc, 0.8)
ENERGY_CASES = {
    "plate, ramp and chained": (
        Shape("plate", (0.03,)),
        [
            Step(3600.0, 860.0, const_face(150.0), ambient_start_c=400.0),
            Step(900.0, 60.0, const_face(2500.0)),
            Step(3600.0, 550.0, const_face(30.0)),
        ],
    ),
    "bar, chained": (
        Shape("bar", (0.04,)),
        [
            Step(3600.0, 860.0, const_face(150.0)),
            Step(900.0, 60.0, const_face(2500.0), ambient_start_c=200.0),
        ],
    ),
    "plate, ramped quench": (
        Shape("plate", (0.04,)),
        [Step(900.0, 60.0, const_face(2500.0), ambient_start_c=200.0)],
    ),
    "two-face plate": (
        Shape("plate", (0.02,)),
        [
            Step(3600.0, 860.0, const_face(150.0), second_face=const_face(400.0), second_ambient_c=300.0),
            Step(600.0, 40.0, const_face(3000.0), second_face=const_face(200.0)),
        ],
    ),
    "block": (
        Shape("block", (0.02, 0.05, 0.08)),
        [
            Step(3600.0, 860.0, const_face(150.0), ambient_start_c=500.0),
            Step(600.0, 60.0, const_face(1500.0)),
        ],
    ),
    "short cylinder": (
        Shape("cylinder", (0.05, 0.03)),
        [
            Step(3600.0, 860.0, const_face(150.0)),
            Step(600.0, 60.0, const_face(1500.0)),
        ],
    ),
    "plate, radiation and oil h(Ts)": (
        Shape("plate", (0.03,)),
        [
            Step(3600.0, 860.0, FURNACE, ambient_start_c=600.0),
            Step(900.0, 60.0, Face(OIL_QUENCH)),
        ],
    ),
    "bar, radiation and oil h(Ts)": (
        Shape("bar", (0.04,)),
        [
            Step(3600.0, 860.0, FURNACE),
            Step(900.0, 60.0, Face(OIL_QUENCH)),
        ],
    ),
}


@pytest.mark.parametrize("name", list(ENERGY_CASES))
def test_energy_balance_constant_properties(name: str) -> None:
    # from memory: the first law, heat stored = heat through the faces; rho c constant: rho c (T_mean - T_0)
    shape, steps = ENERGY_CASES[name]
    t0 = 20.0
    tr = run_one(PartThermal(shape, CR_MO_STEEL, t0), steps, samples=40)
    stored = RHO * CP * (tr.mean_c - t0)
    rel = np.max(np.abs(stored - tr.heat_in_j_m3)) / np.max(np.abs(tr.heat_in_j_m3))
    record(f"energy balance: {name} (relative)", "from memory", 1e-6, rel)
    i = int(np.argmax(np.abs(stored - tr.heat_in_j_m3)))
    assert rel < 1e-6, (
        f"t = {tr.time_s[i]} s: stored {stored[i]:.6e} J/m3, heat in {tr.heat_in_j_m3[i]:.6e} J/m3"
    )


def test_second_ambient_without_second_face_is_refused() -> None:
    # a second ambient says nothing about how heat crosses that face: refuse it rather than ignore it
    part = PartThermal(Shape("plate", (0.02,)), CR_MO_STEEL, 20.0)
    step = Step(3600.0, 860.0, const_face(100.0), second_ambient_c=200.0)
    with pytest.raises(ValueError, match="second face"):
        simulate([part], [step])
