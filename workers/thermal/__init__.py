"""The thermal engine: exact series solutions of transient conduction, chained through a schedule.

Pure numpy/scipy, SI units (degC for temperatures), no I/O. ``simulate`` is the entry point; the
dataclasses in ``spec`` describe its inputs and outputs.
"""

from workers.thermal.engine import sample_times, simulate
from workers.thermal.spec import Curve, Face, Material, PartThermal, Shape, Step, Tolerance, Trace

__all__ = [
    "Curve",
    "Face",
    "Material",
    "PartThermal",
    "Shape",
    "Step",
    "Tolerance",
    "Trace",
    "sample_times",
    "simulate",
]
