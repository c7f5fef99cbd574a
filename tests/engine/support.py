"""Helpers shared by the engine checks: one-part runs, the reference at the engine's times, differences.

Every check reports what it measured through ``record``: set SOAKLINE_AGREEMENT to a file path and each
check appends one JSON line (check, source, tolerance, measured), so the table of agreement is built
from the same numbers the assertions use.
"""

from __future__ import annotations

import json
import os
from collections.abc import Sequence

import numpy as np

from tests.reference.mol import MolResult, solve
from workers.thermal import Tolerance, Trace, simulate
from workers.thermal.spec import FloatArray, PartThermal, Step

POINTS = ("core_c", "surface_c", "mean_c", "second_surface_c")


def record(check: str, source: str, tolerance: float, measured: float) -> None:
    path = os.environ.get("SOAKLINE_AGREEMENT")
    if path:
        row = {"check": check, "source": source, "tolerance": tolerance, "measured": float(measured)}
        with open(path, "a", encoding="utf-8") as fh:
            fh.write(json.dumps(row) + "\n")


def run_one(
    part: PartThermal, steps: Sequence[Step], *, samples: int = 120, tol: Tolerance | None = None
) -> Trace:
    traces = simulate([part], steps, samples_per_step=samples, tol=tol or Tolerance())
    assert len(traces) == 1
    return traces[0]


def reference(part: PartThermal, steps: Sequence[Step], times: FloatArray, *, nonlinear: bool) -> MolResult:
    """Method-of-lines reference, Richardson-extrapolated; looser time tolerance where 1 K is the bar."""
    if nonlinear:
        return solve(part, steps, times, cells=60, rtol=1e-7, atol=1e-7, richardson=True)
    return solve(part, steps, times, cells=80, richardson=True)


def differences(trace: Trace, ref: MolResult, part: PartThermal) -> dict[str, FloatArray]:
    """Engine minus reference at every reported point the two share, in kelvin.

    With constant properties the heat in through the faces is compared too, as the mean temperature
    rise it stands for (heat in / rho c).
    """
    out = {}
    for name in POINTS:
        a, b = getattr(trace, name), getattr(ref, name)
        if a is not None and b is not None:
            out[name] = np.asarray(a - b, dtype=float)
    mat = part.material
    if mat.is_constant:
        rc = mat.density * float(mat.specific_heat.value[0])
        out["heat_in_j_m3"] = np.asarray((trace.heat_in_j_m3 - ref.heat_in_j_m3) / rc, dtype=float)
    return out


def worst(diffs: dict[str, FloatArray], trace: Trace, ref: MolResult) -> str:
    """Where the largest difference is, with both values, for the failure message."""
    name = max(diffs, key=lambda n: float(np.max(np.abs(diffs[n]))))
    i = int(np.argmax(np.abs(diffs[name])))
    unit = " J/m3" if name == "heat_in_j_m3" else ""
    return (
        f"{name} at t = {trace.time_s[i]:.6g} s (step {int(trace.step_index[i])}): "
        f"engine {getattr(trace, name)[i]:.6f}{unit}, reference {getattr(ref, name)[i]:.6f}{unit}, "
        f"difference {diffs[name][i]:+.6f} K"
    )
