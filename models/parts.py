"""Parts of a batch file: shape and sizes, material (catalog name or inline), start temperature, targets."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Annotated, Any, Literal

from pydantic import BeforeValidator, Field

from models import catalog, limits, units
from models.base import RuleProblem, SpecModel, as_raw
from models.composition import CompositionSpec
from models.fields import (
    ConductivityValue,
    DensityValue,
    LengthText,
    PartId,
    PropertyTable,
    SpecificHeatValue,
    TemperatureText,
    check_material_name,
)
from models.targets import PHASE_KINDS, TargetSpec

ShapeName = Literal["plate", "bar", "block", "cylinder"]
SIZE_FIELDS = ("thickness", "width", "length", "diameter")
SIZES: dict[str, tuple[str, ...]] = {
    "plate": ("thickness",),
    "bar": ("diameter",),
    "block": ("thickness", "width", "length"),
    "cylinder": ("diameter", "length"),
}
_EXAMPLE_SIZE = {"thickness": "'50 mm'", "width": "'400 mm'", "length": "'1 m'", "diameter": "'80 mm'"}
_WITH_CORNER = ("block", "cylinder")
PHASE_SHAPES = ("plate", "bar")  # the 1-D layouts, whose march follows phases


def _table(value: str | PropertyTable, kind: units.Kind) -> catalog.Table:
    source = "given in the batch file"
    if isinstance(value, str):
        return catalog.Table.constant(units.parse_quantity(value, kind), kind.si_unit, source)
    temps = tuple(units.parse_temperature(t) for t, _ in value)
    values = tuple(units.parse_quantity(v, kind) for _, v in value)
    return catalog.Table(temps, values, kind.si_unit, (source,) * len(value))


class InlineMaterialSpec(SpecModel):
    """A steel given in the file: each property a unit string or a table [[temperature, value], ...]."""

    conductivity: ConductivityValue
    density: DensityValue
    specific_heat: SpecificHeatValue

    def to_data(self, name: str = "inline") -> catalog.MaterialData:
        return catalog.MaterialData(
            name=name,
            description="given in the batch file",
            density=_table(self.density, units.DENSITY),
            conductivity=_table(self.conductivity, units.CONDUCTIVITY),
            specific_heat=_table(self.specific_heat, units.SPECIFIC_HEAT),
        )


def _inline_or_name(value: object) -> object:
    checked = check_material_name(value)
    return InlineMaterialSpec.model_validate(checked) if isinstance(checked, dict) else checked


def _targets_limit(value: object) -> object:
    if isinstance(value, list) and len(value) > limits.MAX_TARGETS_PER_PART:
        raise ValueError(f"a part holds at most {limits.MAX_TARGETS_PER_PART} targets, got {len(value)}")
    return value


def _composition_rules(raw: Mapping[str, Any]) -> list[RuleProblem]:
    name = raw.get("material")
    if raw.get("composition") is None or not isinstance(name, str | int) or isinstance(name, bool):
        return []
    try:
        data = catalog.get_material(str(name))
    except ValueError:
        return []  # the material field reports it
    if data.austenitic:
        return [
            (
                ("composition",),
                f"{data.name} is an austenitic steel: it does not transform on quenching, so the phase "
                "and hardness estimates do not apply; remove composition",
            )
        ]
    return []


def _phase_target_rules(raw: Mapping[str, Any], shape: str) -> list[RuleProblem]:
    """A hardness or martensite target needs phases followed: a plate or bar of a steel with a known
    composition (the file's, or the catalog grade's nominal one) that transforms on quenching."""
    targets = raw.get("targets")
    if not isinstance(targets, list):
        return []
    phase = [
        (i, kind)
        for i, t in enumerate(targets)
        if (rt := as_raw(t)) is not None
        for kind in PHASE_KINDS
        if rt.get(kind) is not None
    ]
    if not phase:
        return []
    why: str | None = None
    if shape not in PHASE_SHAPES:
        why = f"phases are followed in plates and bars only, not in a {shape}"
    else:
        name = raw.get("material")
        if isinstance(name, str | int) and not isinstance(name, bool):
            try:
                data = catalog.get_material(str(name))
            except ValueError:
                return []  # the material field reports it
            if data.austenitic:
                why = f"{data.name} is an austenitic steel: it does not transform on quenching"
            elif data.composition is None and raw.get("composition") is None:
                why = (
                    f"the catalog has no composition for {data.name}: give the heat's composition "
                    "(C at least)"
                )
        elif raw.get("composition") is None:
            why = "an inline material has no composition: give the heat's composition (C at least)"
    if why is None:
        return []
    return [(("targets", i, kind), f"{kind} needs the steel's phases: {why}") for i, kind in phase]


class PartSpec(SpecModel):
    """One part of the batch. Sizes by shape: plate thickness; bar diameter; block thickness, width and
    length; cylinder diameter and length."""

    id: PartId
    shape: ShapeName
    thickness: LengthText | None = None
    width: LengthText | None = None
    length: LengthText | None = None
    diameter: LengthText | None = None
    material: Annotated[str | InlineMaterialSpec, BeforeValidator(_inline_or_name)]
    initial: TemperatureText
    composition: CompositionSpec | None = None
    targets: Annotated[list[TargetSpec], BeforeValidator(_targets_limit)] = Field(default_factory=list)

    @classmethod
    def _rules(cls, raw: Mapping[str, Any]) -> list[RuleProblem]:
        shape = raw.get("shape")
        if not isinstance(shape, str) or shape not in SIZES:
            return []  # the shape field itself reports the problem
        needed = SIZES[shape]
        problems: list[RuleProblem] = [
            ((f,), f"required for a {shape}, e.g. {_EXAMPLE_SIZE[f]}") for f in needed if raw.get(f) is None
        ]
        problems += [
            ((f,), f"a {shape} takes {' and '.join(needed)} only; remove {f}")
            for f in SIZE_FIELDS
            if f not in needed and raw.get(f) is not None
        ]
        problems += _composition_rules(raw)
        problems += _phase_target_rules(raw, shape)
        targets = raw.get("targets")
        if isinstance(targets, list):
            points = [(i, raw_target.get("at")) for i, t in enumerate(targets) if (raw_target := as_raw(t))]
            if shape not in _WITH_CORNER:
                problems += [
                    (
                        ("targets", i, "at"),
                        f"corner is reported for blocks and cylinders only, not for a {shape}",
                    )
                    for i, at in points
                    if at == "corner"
                ]
            if shape != "plate":
                problems += [
                    (("targets", i, "at"), f"underside is reported for plates only, not for a {shape}")
                    for i, at in points
                    if at == "underside"
                ]
        return problems

    def _length_m(self, text: str | None) -> float | None:
        return None if text is None else units.parse_length(text)

    @property
    def thickness_m(self) -> float | None:
        return self._length_m(self.thickness)

    @property
    def width_m(self) -> float | None:
        return self._length_m(self.width)

    @property
    def length_m(self) -> float | None:
        return self._length_m(self.length)

    @property
    def diameter_m(self) -> float | None:
        return self._length_m(self.diameter)

    @property
    def half_sizes_m(self) -> tuple[float, ...]:
        """Half sizes in the engine's order: plate (a,), bar (R,), block (a, b, c), cylinder (R, L/2)."""
        return tuple(units.parse_length(getattr(self, f)) / 2.0 for f in SIZES[self.shape])

    @property
    def initial_c(self) -> float:
        return units.parse_temperature(self.initial)

    @property
    def material_name(self) -> str:
        """The catalog name, or "inline" for properties given in the file."""
        return self.material if isinstance(self.material, str) else "inline"

    def size_text(self, length: Callable[[str, float], str], times: str = "×") -> str:
        """The section sizes for people: "50 mm", "dia 80 mm", "50 mm × 200 mm × 400 mm".

        ``length(text, metres)`` writes one size: the text as the file gave it, or a conversion.
        """
        sizes = [
            length(text, units.parse_length(text)) for f in SIZES[self.shape] if (text := getattr(self, f))
        ]
        prefix = "dia " if self.shape in ("bar", "cylinder") else ""
        return prefix + f" {times} ".join(sizes)

    @property
    def follows_phases(self) -> bool:
        """Whether the engine follows this part's phases: a plate or bar of a steel with a composition,
        when the file gives the heat's composition or a hardness or martensite target (README,
        "Phases and hardness"); every other part keeps the single enthalpy curve."""
        wanted = self.composition is not None or any(t.is_phase for t in self.targets)
        return wanted and self.shape in PHASE_SHAPES and self.composition_data is not None

    @property
    def composition_data(self) -> catalog.CompositionData | None:
        """The chemistry the phase estimates use: the file's heat over the grade's nominal values, the
        nominal values alone, or None (no estimate: a steel without composition, or austenitic)."""
        nominal = self.material_data.composition
        if self.composition is not None:
            return self.composition.resolved(nominal)
        return nominal

    @property
    def material_data(self) -> catalog.MaterialData:
        """Properties against temperature, from the catalog or from the inline values."""
        if isinstance(self.material, str):
            return catalog.get_material(self.material)
        return self.material.to_data()
