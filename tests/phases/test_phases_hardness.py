"""Maynier's as-quenched hardness, the cooling rate at 700 degC and the HV-HRC scale."""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from models.phasedata import hrc_to_hv, hv_to_hrc
from tests.phases.steels import cool_at, grade
from workers.thermal.phases import maynier_hv, rate_at_700
from workers.thermal.phases.transform import A, B, F, M, P


def _hrc_after(name: str, rate: float) -> float | None:
    c = grade(name)
    frac = cool_at(c, [rate]).frac[:, 0]
    hv = maynier_hv(c, rate, frac[M], frac[B], frac[F] + frac[P], frac[A]).mixture
    return hv_to_hrc(hv)


def test_as_quenched_hardness_of_the_grades() -> None:
    """Fully hardened (from memory: as-quenched 4140 and 4340 about 54-59 HRC, 1045 water-quenched
    thin about 55-60 HRC)."""
    for name in ("4140", "4340"):
        hrc = _hrc_after(name, 100.0)
        assert hrc is not None and 54.0 <= hrc <= 60.0, name
    hrc = _hrc_after("1045", 300.0)
    assert hrc is not None and 55.0 <= hrc <= 61.0


def test_normalised_1045() -> None:
    """1045 cooled in still air (about 1 K/s at 700 degC in a 25 mm bar) is ferrite and pearlite of
    about 170-220 HV (from memory: normalised 1045 about 170-210 HB)."""
    c = grade("1045")
    frac = cool_at(c, [1.0]).frac[:, 0]
    assert frac[F] + frac[P] > 0.95
    hv = maynier_hv(c, 1.0, frac[M], frac[B], frac[F] + frac[P], frac[A]).mixture
    assert 170.0 <= hv <= 230.0


def test_hardness_falls_with_cooling_rate() -> None:
    values = [_hrc_after("4140", r) or 0.0 for r in (100.0, 10.0, 3.0, 1.0)]
    assert all(a >= b for a, b in itertools.pairwise(values))


def test_rate_at_700() -> None:
    t = np.linspace(0.0, 100.0, 101)
    temp = 860.0 - 4.0 * t
    assert rate_at_700(t, temp) == pytest.approx(4.0)
    assert rate_at_700(t, np.full(101, 650.0)) is None


def test_hardness_scale() -> None:
    """ASTM E140 (from memory): 50 HRC is 513 HV, 60 HRC 697 HV; below 20 HRC the scale gives none."""
    assert hv_to_hrc(513.0) == pytest.approx(50.0)
    assert hrc_to_hv(60.0) == pytest.approx(697.0)
    assert hv_to_hrc(200.0) is None
