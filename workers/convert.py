"""Turn a validated batch spec into the thermal engine's inputs (parts in batch order, steps in order).

The catalogs and the spec give SI values; this module only reshapes them: catalog tables become
engine ``Curve``s, a step's constant ``htc`` becomes a one-point curve, a medium's h(T_surface) table
its curve, and a plate's different lower face the step's ``second_face``. A part whose phases are
followed (``PartSpec.follows_phases``) carries its composition.
"""

from __future__ import annotations

from models import BatchSpec, LowerFaceSpec, MaterialData, PartSpec, StepSpec, Table
from workers.thermal import Curve, Face, Material, PartThermal, Shape, Step
from workers.thermal.phases import Composition

__all__ = ["engine_inputs", "steel_of", "to_face", "to_material", "to_part", "to_step"]

# The engine takes density as one number; catalog tables start near room temperature.
_DENSITY_AT_C = 20.0


def _curve(table: Table) -> Curve:
    return Curve(tuple(table.temp_c), tuple(table.value))


def to_material(data: MaterialData) -> Material:
    """Engine material: k(T) and cp(T) curves, density at 20 degC (or the first row of its table)."""
    return Material(
        conductivity=_curve(data.conductivity),
        density=data.density.at(_DENSITY_AT_C),
        specific_heat=_curve(data.specific_heat),
    )


def to_face(face: StepSpec | LowerFaceSpec) -> Face:
    """Convection (constant or h(T_surface) of a medium) plus the face's emissivity."""
    htc = Curve.constant(face.htc_w_m2k) if face.htc_w_m2k is not None else _curve(face.htc_table)
    return Face(htc=htc, emissivity=face.emissivity_value)


def to_step(step: StepSpec) -> Step:
    """One schedule step; a lower face without its own ambient follows the step's ambient."""
    lower = step.lower_face
    return Step(
        duration_s=step.duration_s,
        ambient_c=step.ambient_c,
        face=to_face(step),
        ambient_start_c=step.ambient_start_c,
        second_face=None if lower is None else to_face(lower),
        second_ambient_c=None if lower is None else lower.ambient_c,
    )


def steel_of(part: PartSpec) -> Composition | None:
    """The composition the engine follows the part's phases with, or None (the single curve)."""
    data = part.composition_data
    if data is None or not part.follows_phases:
        return None
    return Composition(**data.values, grain_size=data.grain_size)


def to_part(part: PartSpec) -> PartThermal:
    return PartThermal(
        shape=Shape(kind=part.shape, half_sizes_m=part.half_sizes_m),
        material=to_material(part.material_data),
        initial_c=part.initial_c,
        composition=steel_of(part),
    )


def engine_inputs(batch: BatchSpec) -> tuple[list[PartThermal], list[Step]]:
    """Every part (in batch order) and every step of the schedule, as the engine takes them."""
    return [to_part(p) for p in batch.parts], [to_step(s) for s in batch.schedule]
