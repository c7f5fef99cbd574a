"""Phases of a steel: transformation temperatures, the decomposition of austenite, hardness, hardenability.

Pure numpy/scipy functions of a steel's composition (mass %), temperature (degC) and time (s): no I/O,
no catalog. Each method names its published source in its module; the validity range of each (where a
composition stops being one the method was fitted to) is data, kept with its source in the models
catalog (README, "Phases and hardness").

| module | what it is for |
|---|---|
| ``composition`` | a steel's composition and grain size |
| ``critical`` | Ac1, Ac3 (Andrews), Ms (Andrews), Bs (Kirkaldy and Venugopalan), equilibrium ferrite |
| ``kinetics`` | ferrite, pearlite and bainite: Kirkaldy and Venugopalan's model (Li et al.'s calibration) |
| ``transform`` | phase fractions per node through any temperature history (the march's state) |
| ``hardness`` | as-quenched hardness from phase fractions and the cooling rate at 700 degC (Maynier) |
| ``hardenability`` | ASTM A255: ideal critical diameter DI by multiplying factors; hardness of martensite |
"""

from workers.thermal.phases.composition import ELEMENTS, Composition
from workers.thermal.phases.critical import Critical, critical_temperatures
from workers.thermal.phases.hardenability import ideal_diameter_in, martensite_hrc
from workers.thermal.phases.hardness import Hardness, maynier_hv, rate_at_700
from workers.thermal.phases.kinetics import Kinetics
from workers.thermal.phases.transform import PHASES, PhaseState, Transformer, koistinen_marburger

__all__ = [
    "ELEMENTS",
    "PHASES",
    "Composition",
    "Critical",
    "Hardness",
    "Kinetics",
    "PhaseState",
    "Transformer",
    "critical_temperatures",
    "ideal_diameter_in",
    "koistinen_marburger",
    "martensite_hrc",
    "maynier_hv",
    "rate_at_700",
]
