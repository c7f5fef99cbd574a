"""Data of the phase and hardness estimates: the methods' composition ranges and the HV-HRC scale.

Both come from ``catalog/phase_methods.yaml`` and ``catalog/hardness.yaml``, every value with its
source; the methods themselves are the engine's (README, "Phases and hardness").
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from functools import cache

import numpy as np

from models.catalog import ELEMENTS, CatalogError, _read


@dataclass(frozen=True)
class MethodRange:
    """Where one method applies: mass % bounds by element, with the source of the bounds."""

    key: str
    name: str
    source: str
    ranges: Mapping[str, tuple[float, float]]
    prediction: bool  # the predicted phases and hardness use it (else a cross-check)

    def outside(self, values: Mapping[str, float]) -> list[str]:
        """Elements of ``values`` outside this method's range, as '0.70 % C (range 0.10-0.60)'."""
        return [
            f"{values[e]:g} % {e} (range {low:g}-{high:g})"
            for e, (low, high) in self.ranges.items()
            if not low <= values.get(e, 0.0) <= high
        ]


@cache
def method_ranges() -> tuple[MethodRange, ...]:
    """Every method's composition range."""
    raw = _read("phase_methods.yaml").get("methods", {})
    found: list[MethodRange] = []
    for key, item in raw.items():
        ranges = item.get("ranges", {})
        if not set(ranges) <= set(ELEMENTS):
            raise CatalogError(f"phase_methods.yaml: {key}: unknown element in ranges")
        found.append(
            MethodRange(
                key=str(key),
                name=str(item["name"]),
                source=" ".join(str(item["source"]).split()),
                ranges={e: (float(lo), float(hi)) for e, (lo, hi) in ranges.items()},
                prediction=item.get("use") == "prediction",
            )
        )
    return tuple(found)


@cache
def boron_threshold() -> tuple[float, str]:
    """Boron (mass %) above which a heat is boron-treated, and the source."""
    raw = _read("phase_methods.yaml")["boron"]
    return float(raw["effective_above"]), " ".join(str(raw["source"]).split())


@cache
def _hardness_rows() -> tuple[np.ndarray, np.ndarray, str]:
    raw = _read("hardness.yaml")
    rows = np.array(raw["rows"], dtype=float)
    if rows.ndim != 2 or np.any(np.diff(rows[:, 0]) <= 0) or np.any(np.diff(rows[:, 1]) <= 0):
        raise CatalogError("hardness.yaml: rows [HRC, HV] increasing in both")
    return rows[:, 0], rows[:, 1], " ".join(str(raw["source"]).split())


def hv_to_hrc(hv: float) -> float | None:
    """Rockwell C for a Vickers hardness (ASTM E140), or None below the scale (under 20 HRC)."""
    hrc, hv_rows, _ = _hardness_rows()
    if hv < hv_rows[0]:
        return None
    return float(np.interp(hv, hv_rows, hrc, right=np.nan)) if hv <= hv_rows[-1] else float(hrc[-1])


def hrc_to_hv(hrc: float) -> float:
    """Vickers for a Rockwell C hardness (ASTM E140), within the table."""
    hrc_rows, hv_rows, _ = _hardness_rows()
    return float(np.interp(hrc, hrc_rows, hv_rows))


def hardness_source() -> str:
    return _hardness_rows()[2]
