"""ASTM A255 ideal critical diameter and martensite hardness: factors, a worked example, cross-checks."""

from __future__ import annotations

import pytest

from models.phasedata import hv_to_hrc
from tests.phases.steels import grade
from workers.thermal.phases import ideal_diameter_in, martensite_hrc, maynier_hv
from workers.thermal.phases.hardenability import carbon_factor, multiplying_factors


def test_worked_example_4140() -> None:
    """DI of 4140 at mid-range chemistry, factor by factor as the standard's tables give them (ASTM
    A255 multiplying factors, from memory): C 0.405 (grain 7) 0.2149, Mn 0.875 3.917, Si 0.25 1.175,
    Cr 0.95 3.052, Mo 0.20 1.600; DI = 4.83 in."""
    c = grade("4140")
    assert carbon_factor(c.C) == pytest.approx(0.2149, abs=5e-4)
    f = multiplying_factors(c)
    assert f["Mn"] == pytest.approx(3.917, abs=2e-3)
    assert f["Si"] == pytest.approx(1.175, abs=1e-3)
    assert f["Cr"] == pytest.approx(3.052, abs=1e-3)
    assert f["Mo"] == pytest.approx(1.600, abs=1e-3)
    assert f["Ni"] == f["Cu"] == f["V"] == 1.0
    assert ideal_diameter_in(c) == pytest.approx(4.83, abs=0.01)


def test_carbon_factor_is_continuous_across_its_pieces() -> None:
    """The standard's carbon table is smooth: its piecewise equations meet within 1.5 % (a slip in a
    remembered coefficient would break that)."""
    for edge in (0.395, 0.555, 0.655, 0.755):
        below, above = carbon_factor(edge - 1e-6), carbon_factor(edge + 1e-6)
        assert above == pytest.approx(below, rel=0.015)


def test_grades_rank_and_lie_in_their_known_range() -> None:
    """DI of the grades (from memory, tables of DI for SAE grades: 1045 about 1 in, 4140 about 5 in,
    4340 about 6-7 in), and the ranking every heat treater knows: 4340 > 4140 > 1045."""
    di = {name: ideal_diameter_in(grade(name)) for name in ("1045", "4140", "4340")}
    assert 0.7 <= di["1045"] <= 1.3
    assert 4.0 <= di["4140"] <= 6.0
    assert 5.5 <= di["4340"] <= 8.0
    assert di["4340"] > di["4140"] > di["1045"]


@pytest.mark.parametrize(
    ("carbon", "hrc"),
    [(0.2, 45.0), (0.4, 56.5), (0.6, 64.0)],  # Hodge and Orehoski (1946), 99 % martensite (from memory)
)
def test_martensite_hardness_against_carbon(carbon: float, hrc: float) -> None:
    assert martensite_hrc(carbon) == pytest.approx(hrc, abs=2.5)


def test_maynier_martensite_agrees_with_a255() -> None:
    """Two published methods for fully martensitic 4140 at the quenched end of the end-quench bar
    (about 300 K/s at 700 degC): Maynier's HV in HRC and A255's initial hardness agree within 3 HRC
    (the methods' scatter is several HRC)."""
    c = grade("4140")
    hv = maynier_hv(c, 300.0, martensite=1.0, bainite=0.0, ferrite_pearlite=0.0).mixture
    hrc = hv_to_hrc(hv)
    assert hrc is not None
    assert hrc == pytest.approx(martensite_hrc(c.C), abs=3.0)
