"""Warnings on a part's composition: outside the range of a method its phase and hardness estimates use,
and a composition given for a shape whose phases are not followed (blocks and short cylinders).

The estimate is computed all the same; the warning names the part's field (its ``composition``, or its
``material`` when the grade's nominal chemistry is meant), the method and the elements outside its range,
from ``catalog/phase_methods.yaml``.
"""

from __future__ import annotations

from models.errors import Problem
from models.loading import format_path
from models.phasedata import boron_threshold, method_ranges
from models.spec import BatchSpec

__all__ = ["composition_warnings"]


def composition_warnings(spec: BatchSpec) -> list[Problem]:
    """One warning per part and method whose range the part's composition leaves, in file order."""
    found: list[Problem] = []
    boron, boron_source = boron_threshold()
    for i, part in enumerate(spec.parts):
        data = part.composition_data
        if part.composition is not None and not part.follows_phases:
            found.append(
                Problem(
                    format_path(("parts", i, "composition")),
                    f"phases are followed in plates and bars only: this {part.shape} keeps the single "
                    "enthalpy curve and gets no phase or hardness estimate",
                )
            )
            continue
        if data is None or not part.follows_phases:
            continue
        field = "composition" if part.composition is not None else "material"
        whose = "" if part.composition is not None else f"{part.material_name}'s nominal composition: "
        path = format_path(("parts", i, field))
        for method in method_ranges():
            outside = method.outside(data.values)
            if method.prediction and outside:
                found.append(
                    Problem(
                        path,
                        f"{whose}{', '.join(outside)} outside the range of {method.name}; "
                        "the phase and hardness estimate is less certain",
                    )
                )
        if data.values["B"] > boron:
            found.append(Problem(path, f"{whose}{data.values['B']:g} % B: {boron_source}"))
    return found
