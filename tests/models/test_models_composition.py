"""A heat's composition in the batch file: merged over the grade's nominal chemistry, clear errors
naming the field, warnings outside the methods' ranges; the catalog grades' chemistry and its sources."""

from __future__ import annotations

from typing import Any

import pytest

from models import SpecError, catalog, parse_batch, target_warnings
from models.resolved import dump_resolved, load_resolved

Doc = dict[str, Any]


def _with(doc: Doc, composition: object, material: str = "4140") -> Doc:
    doc["parts"][0]["composition"] = composition
    doc["parts"][0]["material"] = material
    return doc


def _problems(doc: Doc) -> list[tuple[str, str]]:
    with pytest.raises(SpecError) as info:
        parse_batch(doc)
    return [(p.path, p.message) for p in info.value.problems]


def test_catalog_grades_carry_a_sourced_composition() -> None:
    for name in ("1010", "1045", "4140", "4340"):
        data = catalog.get_material(name).composition
        assert data is not None and set(data.values) == set(catalog.ELEMENTS)
        assert all(data.sources[e] for e in catalog.ELEMENTS) and data.grain_source
    assert catalog.get_material("304").composition is None and catalog.get_material("304").austenitic
    assert catalog.get_material("plain-carbon").composition is None
    # 4140 (SAE J404, from memory): 0.38-0.43 C, 0.75-1.00 Mn, 0.80-1.10 Cr, 0.15-0.25 Mo
    c = catalog.get_material("4140").composition
    assert c is not None and (c.values["C"], c.values["Cr"], c.values["Mo"]) == (0.405, 0.95, 0.20)


def test_mill_certificate_over_nominal(doc: Doc) -> None:
    spec = parse_batch(_with(doc, {"C": 0.42, "Mn": "0.92 %", "Cr": 1.02, "grain_size": 8}))
    data = spec.parts[0].composition_data
    assert data is not None
    assert (data.values["C"], data.values["Mn"], data.values["Cr"], data.grain_size) == (
        0.42,
        0.92,
        1.02,
        8.0,
    )
    assert data.values["Mo"] == 0.20 and "nominal" not in data.sources["C"]
    assert "J404" in data.sources["Mo"]
    again = load_resolved(dump_resolved(spec)).parts[0].composition_data
    assert again == data


def test_inline_material_with_composition(doc: Doc) -> None:
    doc["parts"][0]["material"] = {
        "conductivity": "40 W/m/K",
        "density": "7850 kg/m^3",
        "specific_heat": "600 J/kg/K",
    }
    doc["parts"][0]["composition"] = {"C": 0.4}
    data = parse_batch(doc).parts[0].composition_data
    assert data is not None and data.values["Mn"] == 0.0 and data.grain_size == 7.0


@pytest.mark.parametrize(
    ("composition", "material", "path", "fragment"),
    [
        ({"Mn": 0.9}, "4140", "parts[0].composition.C", "required"),
        ({"C": 2.5}, "4140", "parts[0].composition.C", "cast iron"),
        ({"C": 0.4, "Mn": -0.1}, "4140", "parts[0].composition.Mn", "between 0 and 30"),
        ({"C": "lots"}, "4140", "parts[0].composition.C", "expected mass %"),
        ({"C": 0.4, "W": 1.0}, "4140", "parts[0].composition.W", "unknown field"),
        ({"C": 0.4, "grain_size": 22}, "4140", "parts[0].composition.grain_size", "ASTM grain size"),
        ({"C": 0.4, "grain_size": "fine"}, "4140", "parts[0].composition.grain_size", "ASTM grain size"),
        ({"C": 0.4, "Cr": 26, "Ni": 25}, "4140", "parts[0].composition", "add up to"),
        ({"C": 0.05}, "304", "parts[0].composition", "austenitic"),
        ("0.4 C", "4140", "parts[0].composition", "expected a mapping"),
    ],
)
def test_composition_errors(doc: Doc, composition: object, material: str, path: str, fragment: str) -> None:
    problems = _problems(_with(doc, composition, material))
    assert any(p == path and fragment in m for p, m in problems), problems


def test_warnings_outside_the_methods_ranges(doc: Doc) -> None:
    spec = parse_batch(_with(doc, {"C": 0.7, "B": 0.002}))
    texts = [w.message for w in target_warnings(spec) if w.path == "parts[0].composition"]
    assert any("0.7 % C" in t and "Maynier" in t for t in texts)
    assert any("0.002 % B" in t and "boron" in t for t in texts)
    assert not any("A255" in t for t in texts)  # a cross-check, shown with its DI
    nominal = parse_batch(_with(doc, None, "4340"))
    assert not [w for w in target_warnings(nominal) if "composition" in w.message]
