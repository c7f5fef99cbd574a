"""Catalog files: they load, every value carries its source, and the tables match what they cite."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

from models import catalog

REQUIRED_MATERIALS = {"plain-carbon", "1010", "1045", "4140", "4340", "304"}
REQUIRED_MEDIA = {
    "oil-still",
    "oil-agitated",
    "polymer",
    "water",
    "brine",
    "air-still",
    "air-forced",
    "furnace",
}
BOILING = {"oil-still", "oil-agitated", "polymer", "water", "brine"}


def _tables() -> list[tuple[str, catalog.Table]]:
    found = []
    for m in catalog.materials().values():
        found += [(f"{m.name}.{p}", getattr(m, p)) for p in ("density", "conductivity", "specific_heat")]
    found += [(f"{m.name}.htc", m.htc) for m in catalog.media().values()]
    return found


def test_required_entries_exist() -> None:
    assert set(catalog.material_names()) >= REQUIRED_MATERIALS
    assert set(catalog.medium_names()) >= REQUIRED_MEDIA


@pytest.mark.parametrize(("where", "table"), _tables())
def test_every_row_has_a_source_that_says_read_or_memory(where: str, table: catalog.Table) -> None:
    assert len(table.sources) == len(table.temp_c) == len(table.value) >= 1, where
    for source in table.sources:
        assert "(read" in source or "from memory" in source, (where, source)
    assert all(b > a for a, b in zip(table.temp_c, table.temp_c[1:], strict=False)), where
    assert all(math.isfinite(v) and v >= 0 for v in table.value), where


def test_media_extras_have_sources() -> None:
    for medium in catalog.media().values():
        if medium.emissivity is not None:
            assert 0.0 < medium.emissivity <= 1.0
            assert medium.emissivity_source
        if medium.grossmann_h is not None:
            low, high = medium.grossmann_h
            assert 0.0 < low <= high
            assert medium.grossmann_source and "from memory" in medium.grossmann_source


def test_boiling_media_depend_on_surface_temperature_and_others_do_not() -> None:
    for name in REQUIRED_MEDIA:
        assert catalog.get_medium(name).htc.is_constant is (name not in BOILING), name


def test_oil_and_polymer_keep_the_shape_buczek_and_telejko_measured() -> None:
    # read: Buczek and Telejko, Int. J. Heat Fluid Flow 44 (2013): oil 0.5 kW/m2K at 800 and 150 C,
    # peak 4.7-6.0 kW/m2K at 520-550 C; polymer 3.2 at 800 C, peak 7.4, 2.0 at 150 C. The catalog keeps
    # the shape (each value over the peak, and where the peak lies); the level is the handbook severity's
    # (tests/engine/test_media_severity.py).
    for name, peak_kw in (("oil-still", 4.7), ("oil-agitated", 6.0)):
        htc = catalog.get_medium(name).htc
        top = int(np.argmax(htc.value))
        assert 520.0 <= htc.temp_c[top] <= 550.0, name
        assert htc.at(800.0) / htc.value[top] == pytest.approx(0.5 / peak_kw, rel=0.01), name
        assert htc.at(150.0) / htc.value[top] == pytest.approx(0.5 / peak_kw, rel=0.01), name
    polymer = catalog.get_medium("polymer").htc
    highest = max(polymer.value)
    assert (polymer.at(800.0) / highest, polymer.at(150.0) / highest) == pytest.approx(
        (3.2 / 7.4, 2.0 / 7.4), rel=0.01
    )


def _en1993_k(t: float) -> float:
    return 54.0 - 3.33e-2 * t if t < 800.0 else 27.3


def _en1993_cp(t: float) -> float:
    if t < 600.0:
        return 425.0 + 7.73e-1 * t - 1.69e-3 * t**2 + 2.22e-6 * t**3
    if t < 735.0:
        return 666.0 + 13002.0 / (738.0 - t)
    if t < 900.0:
        return 545.0 + 17820.0 / (t - 731.0)
    return 650.0


def test_plain_carbon_rows_are_the_en1993_formulas() -> None:
    # EN 1993-1-2 (Eurocode 3, fire part), section 3.4
    steel = catalog.get_material("plain-carbon")
    for t, k in zip(steel.conductivity.temp_c, steel.conductivity.value, strict=True):
        assert k == pytest.approx(_en1993_k(t), abs=0.06)
    for t, cp in zip(steel.specific_heat.temp_c, steel.specific_heat.value, strict=True):
        assert cp == pytest.approx(_en1993_cp(t), abs=0.01)
    assert max(steel.specific_heat.value) == pytest.approx(5000.0)


def test_latent_heat_peak_is_tabulated_densely_enough() -> None:
    # The enthalpy 20-1200 C of the linear table stays within 0.5 % of the EN 1993-1-2 formula's integral.
    table = catalog.get_material("plain-carbon").specific_heat
    exact = sum(
        quad(_en1993_cp, a, b, limit=200)[0] for a, b in ((20, 600), (600, 735), (735, 900), (900, 1200))
    )
    tabulated = float(np.trapezoid(table.value, table.temp_c))
    assert tabulated == pytest.approx(exact, rel=5e-3)
    latent_exact = sum(quad(_en1993_cp, a, b, limit=200)[0] for a, b in ((600, 735), (735, 900)))
    inside = [i for i, t in enumerate(table.temp_c) if 600 <= t <= 900]
    latent = float(np.trapezoid([table.value[i] for i in inside], [table.temp_c[i] for i in inside]))
    assert latent == pytest.approx(latent_exact, rel=1e-2)


@pytest.mark.parametrize(
    ("name", "rho", "cp", "k"),
    [  # Incropera, Fundamentals of Heat and Mass Transfer, Table A.1, 300 K
        ("1010", 7832, 434, 63.9),
        ("1045", 7833, 465, 53.6),  # 0.5% C row
        ("4140", 7822, 444, 37.7),  # 1/2Cr-1/4Mo-Si row standing in
        ("304", 7900, 477, 14.9),
    ],
)
def test_300k_values_are_incropera(name: str, rho: float, cp: float, k: float) -> None:
    steel = catalog.get_material(name)
    assert steel.density.at(27.0) == pytest.approx(rho)
    assert steel.specific_heat.at(27.0) == pytest.approx(cp)
    assert steel.conductivity.at(27.0) == pytest.approx(k)


def test_table_interpolates_linearly_and_holds_ends() -> None:
    table = catalog.Table((0.0, 100.0), (10.0, 20.0), "W/m/K", ("a", "b"))
    assert (table.at(-50.0), table.at(25.0), table.at(500.0)) == (10.0, 12.5, 20.0)


def test_names_are_normalised_and_unknown_names_list_the_known() -> None:
    assert catalog.get_material("AISI 4140").name == "4140"
    assert catalog.get_material("Plain Carbon").name == "plain-carbon"
    assert catalog.get_medium("Oil_Agitated").name == "oil-agitated"
    with pytest.raises(ValueError, match=r"unknown material '4150'; known materials: plain-carbon, 1010"):
        catalog.get_material("4150")
    with pytest.raises(ValueError, match=r"unknown medium 'oil'; known media: oil-still"):
        catalog.get_medium("oil")


def test_tempering_constant_has_its_source() -> None:
    constant, source = catalog.hollomon_jaffe_constant()
    assert constant == 20.0
    assert "Hollomon-Jaffe" in source and "(read" in source
