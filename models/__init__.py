"""What every soakline process shares, the lowest layer: batch-file models, units, catalogs, input
errors, result shapes and, in their own submodules, the settings, the database tables, the store and the
job repository.

Nothing here imports ``workers`` or ``scheduler`` (the import contracts in pyproject.toml check it).
This module exports the batch-file side (pydantic, pint and PyYAML only); the service side is imported
from its submodules: ``models.settings``, ``models.tables``, ``models.store``, ``models.repository``.
"""

from models.catalog import (
    CatalogError,
    MaterialData,
    Medium,
    Table,
    get_material,
    get_medium,
    hollomon_jaffe_constant,
    material_names,
    materials,
    media,
    medium_names,
)
from models.errors import Problem, SpecError
from models.loading import format_path, load_batch_file, parse_batch, with_durations, with_step_durations
from models.plausibility import target_warnings
from models.spec import (
    BatchSpec,
    InlineMaterialSpec,
    LowerFaceSpec,
    PartSpec,
    StepSpec,
    TargetKind,
    TargetSpec,
)
from models.units import (
    parse_conductivity,
    parse_density,
    parse_htc,
    parse_length,
    parse_specific_heat,
    parse_temperature,
    parse_temperature_delta,
    parse_time,
    ureg,
)

__all__ = [
    "BatchSpec",
    "CatalogError",
    "InlineMaterialSpec",
    "LowerFaceSpec",
    "MaterialData",
    "Medium",
    "PartSpec",
    "Problem",
    "SpecError",
    "StepSpec",
    "Table",
    "TargetKind",
    "TargetSpec",
    "format_path",
    "get_material",
    "get_medium",
    "hollomon_jaffe_constant",
    "load_batch_file",
    "material_names",
    "materials",
    "media",
    "medium_names",
    "parse_batch",
    "parse_conductivity",
    "parse_density",
    "parse_htc",
    "parse_length",
    "parse_specific_heat",
    "parse_temperature",
    "parse_temperature_delta",
    "parse_time",
    "target_warnings",
    "ureg",
    "with_durations",
    "with_step_durations",
]
