"""What every method hands back for one step of one cohort: the same shape whichever method ran."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from workers.thermal.group import State
from workers.thermal.spec import FloatArray

POINTS = ("core", "surface", "mean", "corner", "second")
RATE_POINTS = ("core", "surface", "corner", "second")  # the points whose rate of change is reported


@dataclass(frozen=True)
class StepResult:
    """One step of one cohort at the step's reported times (m of them, the step's end the last).

    ``values``: point -> (P, m) degC: ``core``, ``surface`` and ``mean`` always, ``corner`` for blocks
    and short cylinders, ``second`` (the lower face) for two-face plates.
    ``rates``: point -> (P, m) K/s, the time derivative of the solution at the same times, for each point
    of ``values`` but ``mean``: from the method itself (the series differentiated, the march's right-hand
    side), so that a crossing can be located between reported times on a cubic (``workers.targets``).
    ``heat``: (P, m) heat in through the faces per unit volume since the step began, J/m^3.
    ``bound``: (P, m) the error bound at each reported time, K.
    ``steps``: (P,) time steps taken (1 for a series step).
    ``end``: where the parts stand at the step's end, for the next step whatever its method; ``None``
    when the method keeps its own state between steps (the solid march).
    ``phases``: at the step's end, for parts whose phases the method followed: ``core`` and
    ``surface`` (P, 5) fractions, ``core_rate700`` and ``surface_rate700`` (P,) K/s (nan for a part
    without phases or a point not yet cooled through 700 degC).
    """

    values: dict[str, FloatArray]
    rates: dict[str, FloatArray]
    heat: FloatArray
    bound: FloatArray
    steps: NDArray[np.int64]
    end: State | None
    phases: dict[str, FloatArray] | None = None
