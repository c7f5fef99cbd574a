"""A steel's composition (mass %) and austenite grain size (ASTM number), as the phase methods take it."""

from __future__ import annotations

from dataclasses import dataclass, fields

ELEMENTS = ("C", "Mn", "Si", "Ni", "Cr", "Mo", "Cu", "V", "B")


@dataclass(frozen=True)
class Composition:
    """Mass % of each element that the methods use; ``grain_size`` is the ASTM E112 number (larger is finer).

    Elements a method does not take are ignored by it (boron by every method here: its effect on
    hardenability is not modelled, README, "Phases and hardness").
    """

    C: float
    Mn: float = 0.0
    Si: float = 0.0
    Ni: float = 0.0
    Cr: float = 0.0
    Mo: float = 0.0
    Cu: float = 0.0
    V: float = 0.0
    B: float = 0.0
    grain_size: float = 7.0

    def __post_init__(self) -> None:
        for f in fields(self):
            if getattr(self, f.name) < 0.0:
                raise ValueError(f"{f.name} must not be negative")

    def as_dict(self) -> dict[str, float]:
        """The elements by symbol (mass %)."""
        return {e: float(getattr(self, e)) for e in ELEMENTS}

    def with_(self, **changes: float) -> Composition:
        """A copy with some values changed (for trends: more carbon, more chromium...)."""
        values = {f.name: getattr(self, f.name) for f in fields(self)}
        values.update(changes)
        return Composition(**values)
