"""Eigenvalues and one-term coefficients of the engine against published tables and Bessel zeros."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.special import jn_zeros

from tests.engine.support import record, run_one
from tests.reference import analytic as an
from tests.reference.cases import const_face
from workers.thermal import eigen, modes
from workers.thermal.spec import Curve, Material, PartThermal, Shape, Step

READ_CENGEL = "read: Cengel Table 4-2"
MEMORY = "from memory"
# The published tables disagree in their last digit (Cengel Table 4-2 against Incropera Table 5.1).
TABLE_TOL = 2e-4
MEMORY_TOL = 1e-3

# Bi, wall root, wall C1, cylinder root, cylinder C1, source
ONE_TERM = [
    (0.01, 0.0998, 1.0017, 0.1412, 1.0025, READ_CENGEL),
    (0.1, 0.3111, 1.0161, 0.4417, 1.0246, READ_CENGEL),
    (0.5, 0.6533, 1.0701, 0.9408, 1.1143, READ_CENGEL),
    (1.0, 0.8603, 1.1191, 1.2558, 1.2071, READ_CENGEL),
    (2.0, 1.0769, 1.1785, 1.5995, 1.3384, READ_CENGEL),
    (5.0, 1.3138, 1.2403, 1.9898, 1.5029, READ_CENGEL),
    (10.0, 1.4289, 1.2620, 2.1795, 1.5677, READ_CENGEL),
    (20.0, 1.4961, 1.2699, 2.2880, 1.5919, MEMORY),
    (50.0, 1.5400, 1.2727, 2.3572, 1.6002, MEMORY),
    (np.inf, np.pi / 2, 4 / np.pi, 2.4048, 1.6021, READ_CENGEL),
]

# read: Watts, Essentials of Applied Mathematics (2007), Appendix A, Table A.1 (roots of x tan x = C)
WATTS = {
    0.1: [0.3111, 3.1731, 6.2991, 9.4354, 12.5743, 15.7143],
    1.0: [0.8603, 3.4256, 6.4373, 9.5293, 12.6453, 15.7713],
    10.0: [1.4289, 4.3058, 7.2281, 10.2003, 13.2142, 16.2594],
    20.0: [1.4961, 4.4915, 7.4954, 10.5117, 13.5420, 16.5864],
}


def one_term(kind: str, Bi: float) -> tuple[float, float]:
    """The engine's first root and uniform-start coefficient."""
    if kind == "wall":
        lam = eigen.plate_roots(np.array([Bi]), 3)
        return float(lam[0, 0]), float(modes.ones(modes.TrigModes.symmetric(lam))[0, 0])
    lam = eigen.bar_roots(np.array([Bi]), 3)
    return float(lam[0, 0]), float(modes.ones(modes.BesselModes(lam))[0, 0])


@pytest.mark.parametrize("row", ONE_TERM, ids=[f"Bi={r[0]}" for r in ONE_TERM])
def test_one_term_coefficients(row: tuple[float, float, float, float, float, str]) -> None:
    Bi, wall_root, wall_c, cyl_root, cyl_c, source = row
    tol = TABLE_TOL if source == READ_CENGEL else MEMORY_TOL
    # read: Cengel Table 4-2 (the rows at Bi = 20 and 50 are from memory, looser tolerance)
    worst = 0.0
    for kind, root, coef in (("wall", wall_root, wall_c), ("cylinder", cyl_root, cyl_c)):
        lam, c1 = one_term(kind, Bi)
        worst = max(worst, abs(lam - root), abs(c1 - coef))
        assert lam == pytest.approx(root, abs=tol), (kind, Bi)
        assert c1 == pytest.approx(coef, abs=tol), (kind, Bi)
    record(f"one-term root and C1, Bi={Bi}", source, tol, worst)


@pytest.mark.parametrize("C", sorted(WATTS))
def test_roots_of_x_tan_x(C: float) -> None:
    lam = eigen.plate_roots(np.array([C]), 6)[0]
    # read: Watts (2007), Appendix A, Table A.1
    diff = np.max(np.abs(lam - np.array(WATTS[C])))
    record(f"x tan x = {C}, first six roots", "read: Watts Table A.1", TABLE_TOL, diff)
    assert diff < TABLE_TOL


def test_bar_limits_are_bessel_zeros() -> None:
    n = 40
    fixed = eigen.bar_roots(np.array([np.inf]), n)[0]
    insulated = eigen.bar_roots(np.array([0.0]), n)[0]
    # computed with scipy: scipy.special.jn_zeros, the reference library for Bessel zeros
    d_fixed = np.max(np.abs(fixed - jn_zeros(0, n)))
    d_ins = np.max(np.abs(insulated - np.concatenate([[0.0], jn_zeros(1, n - 1)])))
    assert d_fixed < 1e-12 and d_ins < 1e-12
    # read: standard tables of Bessel zeros (the cylinder's limits)
    j0_read = np.array([2.4048, 5.5201, 8.6537, 11.7915])
    j1_read = np.array([3.8317, 7.0156, 10.1735, 13.3237])
    d_read = max(np.max(np.abs(fixed[:4] - j0_read)), np.max(np.abs(insulated[1:5] - j1_read)))
    assert d_read < 1e-4
    record("bar roots at Bi = inf and 0 vs jn_zeros", "computed with scipy", 1e-12, max(d_fixed, d_ins))
    record("bar roots at Bi = inf and 0 vs table", "read: tables of Bessel zeros", 1e-4, d_read)


def test_roots_match_bracketed_solutions_over_a_biot_sweep() -> None:
    Bis = np.concatenate([[0.0], np.logspace(-4, 4, 33), [np.inf]])
    n = 30
    plate = eigen.plate_roots(Bis, n)
    bar = eigen.bar_roots(Bis, n)
    # computed with scipy: brentq on lam sin(lam) - Bi cos(lam) and lam J1 - Bi J0, own brackets
    d = 0.0
    for i, Bi in enumerate(Bis):
        d = max(
            d, np.max(np.abs(plate[i] - an.plate_roots(Bi, n))), np.max(np.abs(bar[i] - an.bar_roots(Bi, n)))
        )
    record("plate and bar roots, Bi sweep 0..inf", "computed with scipy", 1e-10, d)
    assert d < 1e-10


def test_two_face_roots_hold_both_symmetric_families() -> None:
    # computed with scipy: a plate of thickness L = 2a with equal faces has the modes cos (lam tan lam =
    # Bi) and sin (-lam cot lam = Bi) of the half plate, so z = mu L = 2 lam
    from scipy.optimize import brentq

    for Bi in (0.05, 1.0, 30.0):
        z = eigen.two_face_roots(np.array([2 * Bi]), np.array([2 * Bi]), 12)[0]
        even = 2 * an.plate_roots(Bi, 6)
        odd = 2 * np.array(
            [
                brentq(
                    lambda lam, b=Bi: lam * np.cos(lam) + b * np.sin(lam),
                    (k + 0.5) * np.pi + 1e-12,
                    (k + 1) * np.pi - 1e-12,
                    xtol=1e-15,
                )
                for k in range(6)
            ]
        )
        want = np.sort(np.concatenate([even, odd]))
        assert np.max(np.abs(z - want)) < 1e-10, Bi


@pytest.mark.parametrize("kind", ["plate", "bar"])
def test_simulated_core_follows_one_term_table_at_late_times(kind: str) -> None:
    # read: Cengel Table 4-2, Bi = 1 row; once Fo >= 1 the second term is below 1e-5 of the first
    k, rho, cp, size = 40.0, 8000.0, 500.0, 0.05
    h = 1.0 * k / size
    mat = Material(Curve.constant(k), rho, Curve.constant(cp))
    part = PartThermal(Shape(kind, (size,)), mat, 900.0)  # type: ignore[arg-type]
    alpha = k / (rho * cp)
    fo_end = 1.5
    tr = run_one(part, [Step(fo_end * size**2 / alpha, 100.0, const_face(h))], samples=30)
    lam, c1 = (0.8603, 1.1191) if kind == "plate" else (1.2558, 1.2071)
    Fo = alpha * tr.time_s / size**2
    late = Fo >= 1.0
    one = c1 * np.exp(-(lam**2) * Fo[late])
    rel = np.max(np.abs((tr.core_c[late] - 100.0) / 800.0 - one) / one)
    # TABLE_TOL on C1 and on lam; the root's share grows as 2 lam Fo through the exponent
    tol = TABLE_TOL / c1 + TABLE_TOL * 2 * lam * fo_end
    record(f"{kind} core vs one-term table, Bi = 1, Fo 1-1.5 (relative)", READ_CENGEL, tol, rel)
    assert rel < tol
