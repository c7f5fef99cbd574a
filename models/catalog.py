"""Steel and quench-medium catalogs: load the YAML files in ``models/catalog/`` into frozen dataclasses.

Values come back in SI units (J/kg/K, W/m/K, kg/m^3, W/m^2/K) against temperature in degC, every row
with the full text of its source. ``Table`` has the same ``temp_c``/``value`` layout as the thermal
engine's ``Curve``, so ``Curve(t.temp_c, t.value)`` converts one.
"""

from __future__ import annotations

import bisect
import math
from collections.abc import Mapping
from dataclasses import dataclass
from functools import cache
from importlib import resources
from typing import Any

import yaml

from models import units


class CatalogError(Exception):
    """A catalog file is malformed: a packaging or editing mistake, never user input."""


@dataclass(frozen=True)
class Table:
    """A property against temperature (degC): linear between rows, flat beyond the ends."""

    temp_c: tuple[float, ...]
    value: tuple[float, ...]
    unit: str
    sources: tuple[str, ...]

    @staticmethod
    def constant(value: float, unit: str, source: str) -> Table:
        return Table((20.0,), (float(value),), unit, (source,))

    @property
    def is_constant(self) -> bool:
        return len(set(self.value)) <= 1

    def at(self, temp_c: float) -> float:
        """Value at ``temp_c``, interpolated linearly."""
        i = bisect.bisect_right(self.temp_c, temp_c)
        if i == 0:
            return self.value[0]
        if i == len(self.temp_c):
            return self.value[-1]
        t0, t1 = self.temp_c[i - 1], self.temp_c[i]
        v0, v1 = self.value[i - 1], self.value[i]
        return v0 + (v1 - v0) * (temp_c - t0) / (t1 - t0)

    def scaled(self, factor: float) -> Table:
        """Every value times ``factor`` (a fitted severity on a medium's h curve), sources kept."""
        return Table(self.temp_c, tuple(v * factor for v in self.value), self.unit, self.sources)


ELEMENTS = ("C", "Mn", "Si", "Ni", "Cr", "Mo", "Cu", "V", "B")


@dataclass(frozen=True)
class CompositionData:
    """A steel's chemistry in mass % by element (``ELEMENTS``) and its ASTM grain size, each with its
    source."""

    values: Mapping[str, float]
    sources: Mapping[str, str]
    grain_size: float
    grain_source: str


@dataclass(frozen=True)
class MaterialData:
    """A steel's density, conductivity and specific heat against temperature, and its nominal
    composition when the phase estimates apply to it."""

    name: str
    description: str
    density: Table  # kg/m^3
    conductivity: Table  # W/m/K
    specific_heat: Table  # J/kg/K
    composition: CompositionData | None = None
    austenitic: bool = False  # no transformation on cooling (austenitic stainless)


@dataclass(frozen=True)
class Medium:
    """A quench medium or furnace atmosphere: h against surface temperature, default emissivity."""

    name: str
    description: str
    htc: Table  # W/m^2/K against surface temperature in degC
    emissivity: float | None = None
    emissivity_source: str | None = None
    grossmann_h: tuple[float, float] | None = None  # 1/inch, low and high, for reference
    grossmann_source: str | None = None


def normalize_name(name: str) -> str:
    """Catalog key for a name as a user may write it: "AISI 4140" -> "4140", "Oil Still" -> "oil-still"."""
    key = "-".join(name.strip().lower().replace("_", " ").split())
    for prefix in ("aisi-", "sae-", "aisi", "sae"):
        if key.startswith(prefix) and key[len(prefix) :][:1].isdigit():
            return key[len(prefix) :]
    return key


def _read(file_name: str) -> dict[str, Any]:
    text = resources.files("models").joinpath("catalog", file_name).read_text(encoding="utf-8")
    data = yaml.safe_load(text)
    if not isinstance(data, dict):
        raise CatalogError(f"{file_name}: top level must be a mapping")
    return data


def _source(sources: Mapping[str, str], key: object, where: str) -> str:
    if not isinstance(key, str) or key not in sources:
        raise CatalogError(f"{where}: unknown source key {key!r}")
    return " ".join(sources[key].split())


def _table(raw: object, kind: units.Kind, sources: Mapping[str, str], where: str) -> Table:
    if not isinstance(raw, dict) or not isinstance(raw.get("rows"), list) or not raw["rows"]:
        raise CatalogError(f"{where}: needs `unit` and a non-empty `rows` list")
    try:
        factor = units.parse_quantity(f"1 {raw.get('unit')}", kind)
    except ValueError as exc:
        raise CatalogError(f"{where}: {exc}") from None
    temps: list[float] = []
    values: list[float] = []
    row_sources: list[str] = []
    for i, row in enumerate(raw["rows"]):
        if not (isinstance(row, list) and len(row) == 3):
            raise CatalogError(f"{where}.rows[{i}]: expected [temperature degC, value, source key]")
        temp, value, key = row
        ok = all(
            isinstance(x, int | float) and not isinstance(x, bool) and math.isfinite(x) for x in (temp, value)
        )
        if not ok or value < 0 or (temps and temp <= temps[-1]):
            raise CatalogError(f"{where}.rows[{i}]: finite values, value >= 0, temperatures increasing")
        temps.append(float(temp))
        values.append(float(value) * factor)
        row_sources.append(_source(sources, key, f"{where}.rows[{i}]"))
    return Table(tuple(temps), tuple(values), kind.si_unit, tuple(row_sources))


def _composition(raw: object, sources: Mapping[str, str], where: str) -> CompositionData | None:
    if raw is None:
        return None
    if not isinstance(raw, dict) or set(raw) != {*ELEMENTS, "grain_size"}:
        raise CatalogError(f"{where}: needs grain_size and every one of {', '.join(ELEMENTS)}")
    values: dict[str, float] = {}
    found: dict[str, str] = {}
    for key, row in raw.items():
        ok = isinstance(row, list) and len(row) == 2 and isinstance(row[0], int | float) and row[0] >= 0
        if not ok:
            raise CatalogError(f"{where}.{key}: expected [value >= 0, source key]")
        values[key] = float(row[0])
        found[key] = _source(sources, row[1], f"{where}.{key}")
    grain = values.pop("grain_size")
    return CompositionData(values, found, grain, found.pop("grain_size"))


def _text(raw: Mapping[str, Any], key: str) -> str:
    return " ".join(str(raw.get(key, "")).split())


@cache
def materials() -> Mapping[str, MaterialData]:
    """Every catalog steel by name."""
    data = _read("materials.yaml")
    sources = data.get("sources", {})
    found: dict[str, MaterialData] = {}
    for name, raw in data.get("materials", {}).items():
        where = f"materials.yaml: {name}"
        found[str(name)] = MaterialData(
            name=str(name),
            description=_text(raw, "description"),
            density=_table(raw.get("density"), units.DENSITY, sources, f"{where}.density"),
            conductivity=_table(
                raw.get("conductivity"), units.CONDUCTIVITY, sources, f"{where}.conductivity"
            ),
            specific_heat=_table(
                raw.get("specific_heat"), units.SPECIFIC_HEAT, sources, f"{where}.specific_heat"
            ),
            composition=_composition(raw.get("composition"), sources, f"{where}.composition"),
            austenitic=bool(raw.get("austenitic", False)),
        )
    return found


def _medium(name: str, raw: Mapping[str, Any], sources: Mapping[str, str]) -> Medium:
    where = f"media.yaml: {name}"
    eps = raw.get("emissivity")
    grossmann = raw.get("grossmann_h")
    if eps is not None and not (isinstance(eps, dict) and 0.0 <= float(eps.get("value", -1)) <= 1.0):
        raise CatalogError(f"{where}.emissivity: expected {{value: 0..1, source: key}}")
    if grossmann is not None and not (isinstance(grossmann, dict) and {"low", "high"} <= grossmann.keys()):
        raise CatalogError(f"{where}.grossmann_h: expected {{low, high, source}}")
    return Medium(
        name=name,
        description=_text(raw, "description"),
        htc=_table(raw.get("htc"), units.HTC, sources, f"{where}.htc"),
        emissivity=None if eps is None else float(eps["value"]),
        emissivity_source=None if eps is None else _source(sources, eps.get("source"), f"{where}.emissivity"),
        grossmann_h=None if grossmann is None else (float(grossmann["low"]), float(grossmann["high"])),
        grossmann_source=None
        if grossmann is None
        else _source(sources, grossmann.get("source"), f"{where}.grossmann_h"),
    )


@cache
def media() -> Mapping[str, Medium]:
    """Every catalog quench medium or furnace atmosphere by name."""
    data = _read("media.yaml")
    sources = data.get("sources", {})
    return {str(name): _medium(str(name), raw, sources) for name, raw in data.get("media", {}).items()}


@cache
def hollomon_jaffe_constant() -> tuple[float, str]:
    """Default constant C of the tempering parameter P = T (C + log10 t), and its source."""
    raw = _read("tempering.yaml").get("hollomon_jaffe", {})
    return float(raw["constant"]), " ".join(str(raw["source"]).split())


@dataclass(frozen=True)
class Bounds:
    """What a steel target can physically mean (``plausibility.yaml``), each bound with its source."""

    melting_c: float
    melting_source: str
    lower_critical_c: float
    lower_critical_source: str
    temper_lowest_c: float
    temper_shortest_h: float
    temper_longest_h: float
    temper_source: str
    constant_low: float
    constant_high: float
    constant_source: str


@cache
def bounds() -> Bounds:
    """Bounds of plausible targets, for warnings."""
    raw = _read("plausibility.yaml")
    try:
        melt, critical, temper, const = (
            raw["steel_melting"],
            raw["lower_critical"],
            raw["tempering"],
            raw["hollomon_jaffe_constant"],
        )
        return Bounds(
            melting_c=float(melt["temperature_c"]),
            melting_source=_text(melt, "source"),
            lower_critical_c=float(critical["temperature_c"]),
            lower_critical_source=_text(critical, "source"),
            temper_lowest_c=float(temper["lowest_c"]),
            temper_shortest_h=float(temper["shortest_h"]),
            temper_longest_h=float(temper["longest_h"]),
            temper_source=_text(temper, "source"),
            constant_low=float(const["low"]),
            constant_high=float(const["high"]),
            constant_source=_text(const, "source"),
        )
    except (KeyError, TypeError, ValueError) as exc:
        raise CatalogError(f"plausibility.yaml: {exc!r}") from None


def material_names() -> tuple[str, ...]:
    return tuple(materials())


def medium_names() -> tuple[str, ...]:
    return tuple(media())


def get_material(name: str) -> MaterialData:
    """The catalog steel called ``name``; ``ValueError`` naming the known steels otherwise."""
    found = materials().get(normalize_name(name))
    if found is None:
        raise ValueError(f"unknown material '{name}'; known materials: {', '.join(material_names())}")
    return found


def get_medium(name: str) -> Medium:
    """The catalog medium called ``name``; ``ValueError`` naming the known media otherwise."""
    found = media().get(normalize_name(name))
    if found is None:
        raise ValueError(f"unknown medium '{name}'; known media: {', '.join(medium_names())}")
    return found
