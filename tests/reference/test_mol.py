"""The method-of-lines reference checked against closed-form solutions, so the engine tests can trust it."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq

from tests.reference import analytic as an
from tests.reference.cases import CR_MO_STEEL, EUROCODE_STEEL, OIL_QUENCH, bar, const_face, plate
from tests.reference.mol import FaceK, Piecewise, face_flux, face_flux_slope, geometry_of, make_grid, solve
from workers.thermal.spec import Curve, Face, Material, PartThermal, Shape, Step

K, RHO, CP = 37.7, 7822.0, 444.0  # read: Incropera, Table A.1 (1/2Cr-1/4Mo-Si)
ALPHA = K / (RHO * CP)


def grid(duration: float, n: int = 60) -> np.ndarray:
    return np.linspace(0.0, duration, n + 1)


def test_plate_matches_series() -> None:
    # computed with scipy: plane-wall series, 400 terms
    a, h, t0, amb = 0.025, 2000.0, 850.0, 60.0
    times = grid(600.0)
    res = solve(plate(a, initial_c=t0), [Step(600.0, amb, const_face(h))], times, richardson=True)
    Bi, Fo = h * a / K, ALPHA * times[1:] / a**2
    for got, want in (
        (res.core_c, an.plate_theta(Bi, Fo, 0.0)),
        (res.surface_c, an.plate_theta(Bi, Fo, 1.0)),
        (res.mean_c, an.plate_mean_theta(Bi, Fo)),
    ):
        assert np.max(np.abs(got[1:] - amb - (t0 - amb) * want)) < 1e-4
    assert res.error_k is not None and res.error_k.max() < 0.01


def test_bar_matches_series() -> None:
    # computed with scipy: cylinder series with Bessel functions, 400 terms
    R, h, t0, amb = 0.03, 800.0, 850.0, 60.0
    times = grid(900.0)
    res = solve(bar(R, initial_c=t0), [Step(900.0, amb, const_face(h))], times, richardson=True)
    Bi, Fo = h * R / K, ALPHA * times[1:] / R**2
    for got, want in (
        (res.core_c, an.bar_theta(Bi, Fo, 0.0)),
        (res.surface_c, an.bar_theta(Bi, Fo, 1.0)),
        (res.mean_c, an.bar_mean_theta(Bi, Fo)),
    ):
        assert np.max(np.abs(got[1:] - amb - (t0 - amb) * want)) < 1e-4


@pytest.mark.parametrize("grading", [0.0, 0.75])
def test_second_order_in_space(grading: float) -> None:
    # computed with scipy: the error must quarter when the cells double
    a, h, t0, amb = 0.025, 2000.0, 850.0, 60.0
    times = grid(600.0, 20)
    want = amb + (t0 - amb) * an.plate_theta(h * a / K, ALPHA * times[1:] / a**2, 1.0)
    errs = []
    for cells in (25, 50, 100):
        res = solve(
            plate(a, initial_c=t0),
            [Step(600.0, amb, const_face(h))],
            times,
            cells=cells,
            grading=grading,
            rtol=1e-10,
            atol=1e-10,
        )
        errs.append(np.max(np.abs(res.surface_c[1:] - want)))
    rates = np.log2(np.array(errs[:-1]) / np.array(errs[1:]))
    assert np.all((rates > 1.8) & (rates < 2.2)), rates


def test_heat_in_equals_stored_heat_constant_properties() -> None:
    a, t0 = 0.02, 20.0
    steps = [
        Step(1800.0, 860.0, const_face(30.0, 0.8), ambient_start_c=500.0),
        Step(600.0, 60.0, Face(OIL_QUENCH)),
    ]
    times = grid(2400.0, 48)
    res = solve(plate(a, initial_c=t0), steps, times)
    stored = RHO * CP * (res.mean_c - t0)
    assert np.max(np.abs(res.heat_in_j_m3 - stored)) < 1e-6 * np.max(np.abs(stored))


@pytest.mark.parametrize("shape", ["plate", "bar", "plate2"])
def test_heat_in_equals_enthalpy_rise_variable_properties(shape: str) -> None:
    t0 = 20.0
    part = PartThermal(Shape("bar" if shape == "bar" else "plate", (0.02,)), EUROCODE_STEEL, t0)
    second_face, second_amb = (const_face(300.0), 200.0) if shape == "plate2" else (None, None)
    steps = [
        Step(1800.0, 880.0, const_face(20.0, 0.8), 600.0, second_face, second_amb),
        Step(300.0, 60.0, Face(OIL_QUENCH), None, second_face, second_amb),
    ]
    times = grid(2100.0, 21)
    res = solve(part, steps, times, cells=20)
    cp = Piecewise(EUROCODE_STEEL.specific_heat)
    g = make_grid(geometry_of(part, steps), 0.02, 20, 0.75)
    enthalpy = EUROCODE_STEEL.density * (cp.integral(res.profile_c) - cp.integral(np.array(t0)))
    stored = enthalpy @ g.vol / g.total_vol
    assert np.max(np.abs(res.heat_in_j_m3 - stored)) < 2e-6 * np.max(np.abs(stored))


def test_semi_infinite_with_convection() -> None:
    # from memory: semi-infinite solid with surface convection (Carslaw and Jaeger, section 2.7)
    a, h, t0, amb = 0.5, 300.0, 20.0, 860.0
    times = np.array([0.0, 10.0, 30.0, 100.0, 300.0])
    res = solve(plate(a, initial_c=t0), [Step(300.0, amb, const_face(h))], times, cells=200, richardson=True)
    depth = a - res.x_m
    near = depth < 0.05
    for i, t in enumerate(times[1:], start=1):
        want = t0 + (amb - t0) * an.semi_infinite_convective(depth[near], t, ALPHA, K, h)
        assert np.max(np.abs(res.profile_c[i, near] - want)) < 2e-5


def test_semi_infinite_fixed_surface_heat_uptake() -> None:
    # from memory: semi-infinite solid, step in surface temperature, heat taken up 2 k dT sqrt(t / (pi alpha))
    a, t0, amb = 0.5, 20.0, 860.0
    times = np.array([0.0, 10.0, 30.0, 100.0, 300.0])
    step = Step(300.0, amb, const_face(1e9))
    res = solve(plate(a, initial_c=t0), [step], times, cells=200, richardson=True)
    want = an.semi_infinite_fixed_heat(times[1:], ALPHA, K) * (amb - t0) / a
    assert np.max(np.abs(res.heat_in_j_m3[1:] / want - 1.0)) < 2e-5
    assert np.max(np.abs(res.surface_c[1:] - amb)) < 5e-3  # q / h with h = 1e9


def test_two_face_steady_line() -> None:
    # from memory: steady plane wall between two fluids, resistances 1/h1 + L/k + 1/h2 in series
    a, h1, h2, amb1, amb2 = 0.01, 50.0, 500.0, 900.0, 20.0
    step = Step(6 * 3600.0, amb1, const_face(h1), second_face=const_face(h2), second_ambient_c=amb2)
    res = solve(plate(a, initial_c=500.0), [step], [0.0, step.duration_s], cells=40)
    q = (amb1 - amb2) / (1 / h1 + 2 * a / K + 1 / h2)
    ts1, ts2 = amb1 - q / h1, amb2 + q / h2
    line = ts2 + (ts1 - ts2) * res.x_m / (2 * a)
    assert np.max(np.abs(res.profile_c[-1] - line)) < 1e-5
    assert res.second_surface_c is not None and abs(res.second_surface_c[-1] - ts2) < 1e-5


def test_steady_profile_with_variable_conductivity() -> None:
    # computed with scipy: with k(T) the steady flux is uniform, so K(T(x)) = int k dT is linear in x
    a, h, amb1, amb2 = 0.02, 2000.0, 900.0, 20.0
    step = Step(10 * 3600.0, amb1, const_face(h), second_face=const_face(h), second_ambient_c=amb2)
    kint = Piecewise(EUROCODE_STEEL.conductivity)

    def big_k(temp: float) -> float:
        return float(kint.integral(np.array(temp)))

    # the same h on both faces: q = h (amb1 - Ts1) = h (Ts2 - amb2) = (K(Ts1) - K(Ts2)) / (2 a)
    ts1 = brentq(
        lambda ts: (big_k(ts) - big_k(amb1 + amb2 - ts)) / (2 * a) - h * (amb1 - ts), amb2, amb1, xtol=1e-12
    )
    ts2 = amb1 + amb2 - ts1
    cases: tuple[tuple[FaceK, float], ...] = (("kirchhoff", 1e-5), ("arithmetic", 0.05))
    for face_k, tol in cases:
        res = solve(
            PartThermal(Shape("plate", (a,)), EUROCODE_STEEL, 400.0),
            [step],
            [0.0, step.duration_s],
            cells=40,
            face_k=face_k,
        )
        k_line = big_k(ts2) + (big_k(ts1) - big_k(ts2)) * res.x_m / (2 * a)
        want = [brentq(lambda t, kv=kv: big_k(t) - kv, amb2, amb1, xtol=1e-12) for kv in k_line]
        assert np.max(np.abs(res.profile_c[-1] - want)) < tol, face_k


def test_ramp_matches_duhamel_series() -> None:
    # computed with scipy: Duhamel's integral of the plane-wall step response for a linear ambient ramp
    a, h, t0, t1, dur = 0.025, 150.0, 400.0, 860.0, 3600.0
    rate = (t1 - t0) / dur
    times = grid(dur)
    step = Step(dur, t1, const_face(h), ambient_start_c=t0)
    res = solve(plate(a, initial_c=t0), [step], times, richardson=True)
    Bi, Fo = h * a / K, ALPHA * times / a**2
    for got, rho in ((res.core_c, 0.0), (res.surface_c, 1.0)):
        want = t0 + rate * a**2 / ALPHA * an.plate_ramp_rise(Bi, Fo, rho)
        assert np.max(np.abs(got - want)) < 5e-5


def test_lumped_radiation_of_a_foil() -> None:
    # from memory: lumped body in radiative exchange, dT/dt = eps sigma A (T_amb^4 - T^4) / (rho c V)
    a, eps, t0, amb = 2.5e-5, 0.8, 20.0, 860.0
    times = grid(5.0, 25)  # the foil is within a kelvin of the furnace after about 5 s
    res = solve(plate(a, initial_c=t0), [Step(5.0, amb, Face(Curve.constant(0.0), eps))], times, cells=10)
    tau = RHO * CP * a / (eps * 5.670374419e-8)
    want = np.array(
        [t0]
        + [
            brentq(
                lambda temp, t=t: float(an.lumped_radiation_time(t0, temp, amb, tau)) - t,
                t0,
                amb - 1e-9,
                xtol=1e-10,
            )
            for t in times[1:]
        ]
    )
    assert np.max(np.abs(res.mean_c - want)) < 0.02  # Bi about 2e-4


def test_face_flux_slope_matches_difference_quotient() -> None:
    face = Face(OIL_QUENCH, 0.6)
    for ts in (90.0, 333.0, 530.0, 760.0, 900.0):
        num = (face_flux(face, ts + 1e-4, 60.0) - face_flux(face, ts - 1e-4, 60.0)) / 2e-4
        assert face_flux_slope(face, ts, 60.0) == pytest.approx(float(num), rel=1e-6)


def test_piecewise_integral_matches_quadrature() -> None:
    from scipy.integrate import quad

    cp = EUROCODE_STEEL.specific_heat
    pw = Piecewise(cp)
    for t in (-50.0, 20.0, 400.0, 736.2, 1000.0, 1500.0):
        knots = [p for p in EUROCODE_STEEL.specific_heat.temp_c if min(20.0, t) < p < max(20.0, t)]
        want, _ = quad(lambda x: float(cp(x)), 20.0, t, limit=500, points=knots or None)
        assert float(pw.integral(np.array(t))) == pytest.approx(want, rel=1e-9, abs=1e-6)


def test_rejects_shapes_it_does_not_cover() -> None:
    block = PartThermal(Shape("block", (0.01, 0.02, 0.03)), CR_MO_STEEL, 20.0)
    with pytest.raises(NotImplementedError):
        solve(block, [Step(10.0, 100.0, const_face(10.0))], [0.0, 10.0])
    wrong = Material(Curve.constant(40.0), 7800.0, Curve.constant(450.0))
    with pytest.raises(ValueError):
        solve(PartThermal(Shape("plate", (0.01,)), wrong, 20.0), [Step(10.0, 90.0, const_face(10.0))], [20.0])


@pytest.mark.parametrize(
    "part",
    [
        bar(0.04, initial_c=860.0),
        pytest.param(PartThermal(Shape("plate", (0.03,)), EUROCODE_STEEL, 860.0), marks=pytest.mark.slow),
    ],
    ids=["bar, oil quench", "plate, k(T) cp(T), oil quench"],
)
def test_richardson_gains_an_order(part: PartThermal) -> None:
    # computed with scipy: the extrapolated coarse pair against a twice finer extrapolated pair;
    # the kinks of a tabulated cp(T) make extrapolation gain less than on smooth problems
    steps = [Step(150.0, 60.0, Face(OIL_QUENCH))]
    times = grid(150.0, 30)
    coarse = solve(part, steps, times, cells=60, rtol=1e-7, atol=1e-7, richardson=True)
    fine = solve(part, steps, times, cells=120, rtol=1e-8, atol=1e-8, richardson=True)
    assert coarse.error_k is not None
    err = max(np.max(np.abs(coarse.core_c - fine.core_c)), np.max(np.abs(coarse.surface_c - fine.surface_c)))
    assert err < coarse.error_k.max() / 5, (err, coarse.error_k.max())


def test_chained_steps_match_projected_series() -> None:
    # computed with scipy: series of the first step, projected on the second step's modes by quadrature
    a = 0.02
    steps = [Step(300.0, 900.0, const_face(200.0)), Step(600.0, 50.0, const_face(1500.0))]
    times = grid(900.0, 90)
    res = solve(plate(a, initial_c=20.0), steps, times, cells=100, rtol=1e-10, atol=1e-10, richardson=True)
    second = times > 300.0
    want = an.plate_two_steps(
        200.0 * a / K,
        1500.0 * a / K,
        ALPHA * 300.0 / a**2,
        ALPHA * (times[second] - 300.0) / a**2,
        20.0,
        900.0,
        50.0,
    )
    for name, values in want.items():
        assert np.max(np.abs(getattr(res, name)[second] - values)) < 1e-5, name
