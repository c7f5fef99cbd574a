"""Inputs and outputs of the thermal engine: plain frozen dataclasses in SI units, no validation.

Everything here is already checked and converted by ``models`` before it reaches the engine: lengths in
metres, times in seconds, temperatures in degrees Celsius (kelvin only inside the radiation term),
conductivity in W/m/K, density in kg/m^3, specific heat in J/kg/K, heat transfer coefficients in
W/m^2/K.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Literal

import numpy as np
from numpy.typing import NDArray

if TYPE_CHECKING:
    from workers.thermal.phases.composition import Composition

FloatArray = NDArray[np.float64]
ShapeName = Literal["plate", "bar", "block", "cylinder"]  # the batch file's shapes


@dataclass(frozen=True)
class Curve:
    """A quantity tabulated against temperature (degC): linear between points, flat beyond the ends."""

    temp_c: tuple[float, ...]
    value: tuple[float, ...]

    @staticmethod
    def constant(value: float) -> Curve:
        return Curve((20.0,), (float(value),))

    @property
    def is_constant(self) -> bool:
        return len(set(self.value)) <= 1

    def __call__(self, temp_c: FloatArray | float) -> FloatArray:
        return np.asarray(np.interp(temp_c, self.temp_c, self.value), dtype=float)


@dataclass(frozen=True)
class Material:
    """Conductivity and specific heat may depend on temperature; density is taken as constant."""

    conductivity: Curve  # W/m/K
    density: float  # kg/m^3
    specific_heat: Curve  # J/kg/K

    @property
    def is_constant(self) -> bool:
        return self.conductivity.is_constant and self.specific_heat.is_constant


@dataclass(frozen=True)
class Shape:
    """Part geometry by half sizes, so that the centre is the origin of every axis.

    plate: (half thickness,); bar: (radius,); block: three half sizes (thickness, width, length);
    cylinder: (radius, half length). A plate and a bar are treated as infinite in their other
    directions: edge effects are left out, which is conservative for the core.
    """

    kind: ShapeName
    half_sizes_m: tuple[float, ...]


@dataclass(frozen=True)
class Face:
    """How heat crosses a face during a step: convection h(T_surface) plus grey radiation."""

    htc: Curve  # W/m^2/K against surface temperature in degC; a constant is a one-point curve
    emissivity: float = 0.0

    @property
    def is_linear(self) -> bool:
        return self.htc.is_constant and self.emissivity == 0.0


@dataclass(frozen=True)
class Step:
    """One schedule step. The ambient ramps linearly from ``ambient_start_c`` when that is given.

    ``second_face`` and ``second_ambient_c`` describe a plate whose lower face differs (a plate on a
    hearth, a one-sided spray); they are only valid for plates.
    """

    duration_s: float
    ambient_c: float
    face: Face
    ambient_start_c: float | None = None
    second_face: Face | None = None
    second_ambient_c: float | None = None

    def ambient_at(self, t_s: FloatArray | float) -> FloatArray:
        """Ambient temperature at time ``t_s`` after the step starts."""
        start = self.ambient_c if self.ambient_start_c is None else self.ambient_start_c
        frac = np.clip(np.asarray(t_s, dtype=float) / self.duration_s, 0.0, 1.0)
        return np.asarray(start + (self.ambient_c - start) * frac, dtype=float)


@dataclass(frozen=True)
class PartThermal:
    """One part as the engine sees it. ``composition``: a steel whose phases are followed (1-D layouts:
    plates, two-face plates and bars; ``plan``), None for the single enthalpy curve."""

    shape: Shape
    material: Material
    initial_c: float
    composition: Composition | None = None


@dataclass(frozen=True)
class Tolerance:
    """Accuracy asked of the engine.

    ``series_k``: largest allowed truncation error of a series at any reported time (kelvin).
    ``step_k``: local time-error estimate allowed per time step of the finite-volume march that solves
    nonlinear steps (kelvin; see ``march``); the global error falls about as step_k^(2/3).
    ``intervals``: node spacings across a plate's half thickness or a bar's radius in that march (a
    two-face plate gets twice as many across its whole thickness); even, since the grid estimate uses
    every second node. ``solid_intervals``: the same along every axis of a block, twice that along
    both axes of a short cylinder. ``phase_change``: largest change of austenite fraction of any node
    in one time step of a march that follows phases (the latent heat is placed after each step).
    """

    series_k: float = 1e-2
    step_k: float = 0.03
    intervals: int = 40
    solid_intervals: int = 12
    phase_change: float = 0.05


@dataclass
class Trace:
    """Computed temperatures of one part at the batch's common sample times.

    ``step_index[i]`` is the schedule step sample ``i`` belongs to; a step boundary appears once, as the
    last sample of the earlier step. ``bound_k`` is the error bound at each sample: the truncation bound
    of a series step, or the error estimate of a marched step (see ``line`` and ``solid``).
    ``mean_c`` is the volume mean temperature and ``heat_in_j_m3`` the heat that has entered through the
    faces per unit volume since time zero (for energy balances). ``corner_c`` is set for blocks and
    short cylinders, ``second_surface_c`` for plates in a schedule with a second face.
    ``core_rate_k_s`` and the other ``*_rate_k_s`` are the time derivatives (K/s) of the solution at
    each sample, from the method that computed it (exact for a series step, the right-hand side of the
    march): with them a crossing between samples is found on a cubic (``workers.targets``). At a step
    boundary the sample's rate is the earlier step's (a face law may jump there). None: not known (a
    trace built by hand), and crossings are taken as linear between samples.
    """

    time_s: FloatArray
    step_index: NDArray[np.int64]
    core_c: FloatArray
    surface_c: FloatArray
    ambient_c: FloatArray
    bound_k: FloatArray
    mean_c: FloatArray
    heat_in_j_m3: FloatArray
    corner_c: FloatArray | None = None
    second_surface_c: FloatArray | None = None
    core_rate_k_s: FloatArray | None = None
    surface_rate_k_s: FloatArray | None = None
    corner_rate_k_s: FloatArray | None = None
    second_surface_rate_k_s: FloatArray | None = None
    substeps: int = 0  # series steps plus march time steps taken for this part
    phases: PhaseTrace | None = None  # a part whose phases were followed


@dataclass
class PhaseTrace:
    """Phases of one part at the end of every step (``core`` and ``surface`` (steps, 5) fractions by
    ``phases.PHASES``) and the cooling rate (K/s) where each point last fell through 700 degC up to that
    step's end (nan when it has not)."""

    core: FloatArray
    surface: FloatArray
    core_rate700: FloatArray
    surface_rate700: FloatArray
