"""What every soakline process shares: batch-file models, units, catalogs and input errors.

Pure: pydantic, pint and PyYAML only; no database, no workers. Import from here, not the submodules.
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
from models.loading import format_path, load_batch_file, parse_batch, with_step_durations
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
    "ureg",
    "with_step_durations",
]
