"""Exchange profiles: fitted exchange of one furnace or tank, named, usable in a step as ``profile: NAME``.

A profile (``ProfileSpec``) is what ``soakline fit --save`` keeps: the fitted constant h or the factor
on a catalog medium's h(T_surface) (its severity), the emissivity, where they came from (the record, its
date, the step) and how well they fit (intervals, RMS and largest residual, warnings, the readings and
modelled curves for the chart). It holds for the furnace or tank in the condition in which it was
recorded.

In a batch file or API body a step (or lower face) may say ``profile: NAME`` instead of ``htc`` or
``medium``; :func:`expand_profiles` writes the profile's values into the step before validation, keeping
``profile`` for the record, so the stored batch says both what was used and where it came from. The CLI
reads profiles from a local JSON file (:class:`LocalProfiles`), the service from its database.
"""

from __future__ import annotations

import datetime as dt
import json
import os
import tempfile
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Annotated, Any, Literal

from platformdirs import user_data_dir
from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, ValidationError, model_validator

from models import catalog, limits
from models.errors import Problem, SpecError
from models.fields import check_part_id

__all__ = [
    "LocalProfiles",
    "ProfileLookup",
    "ProfileParam",
    "ProfileSeries",
    "ProfileSpec",
    "expand_profiles",
    "local_profiles_path",
    "parse_profile",
]

ProfileName = Annotated[str, BeforeValidator(check_part_id)]
ProfileLookup = Callable[[str], "ProfileSpec | None"]
CAUTION = (
    "A fitted profile holds for the furnace or tank in the condition in which it was recorded (load "
    "spacing, fan, oil age and temperature, agitation). It never replaces the furnace surveys and "
    "instrument checks that the pyrometry specifications require."
)


MAX_POINTS = 100_000  # readings or curve points per thermocouple
MAX_SERIES = 200  # thermocouples per profile
Short = Annotated[str, Field(max_length=limits.MAX_TEXT)]


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, allow_inf_nan=False)


class ProfileParam(_Model):
    """One fitted value with its interval at the fit's level."""

    name: Literal["h", "emissivity", "severity", "lag"]
    value: float
    low: float
    high: float
    unit: str = ""


class ProfileSeries(_Model):
    """One thermocouple for the chart: readings, the fitted model's curve, residuals within the step."""

    part: Short
    thermocouple: Short
    position: Short
    time_s: list[float] = Field(max_length=MAX_POINTS)
    reading_c: list[float] = Field(max_length=MAX_POINTS)
    residual_k: list[float | None] = Field(max_length=MAX_POINTS)  # None outside the fitted step
    model_time_s: list[float] = Field(max_length=MAX_POINTS)
    model_c: list[float] = Field(max_length=MAX_POINTS)

    @model_validator(mode="after")
    def _same_lengths(self) -> ProfileSeries:
        if not len(self.time_s) == len(self.reading_c) == len(self.residual_k):
            raise ValueError("time_s, reading_c and residual_k must have one entry per reading")
        if len(self.model_time_s) != len(self.model_c):
            raise ValueError("model_time_s and model_c must have the same length")
        return self


class ProfileSpec(_Model):
    """A named exchange profile with its provenance and fit."""

    name: ProfileName
    htc_w_m2k: float | None = Field(default=None, gt=0)
    medium: Short | None = None
    severity: float | None = Field(default=None, gt=0)
    emissivity: float = Field(default=0.0, ge=0, le=1)
    lag_s: float | None = Field(default=None, ge=0)
    step: Short
    ambient: Short
    record: Short
    record_date: dt.date
    fitted_at: dt.datetime
    level: float = Field(gt=0, lt=1)
    params: list[ProfileParam] = Field(min_length=1, max_length=4)
    rms_k: float = Field(ge=0)
    max_k: float = Field(ge=0)
    readings: int = Field(ge=1)
    warnings: list[Annotated[str, Field(max_length=2000)]] = Field(default_factory=list, max_length=20)
    series: list[ProfileSeries] = Field(default_factory=list, max_length=MAX_SERIES)
    description: str = Field(default="", max_length=2000)

    @model_validator(mode="after")
    def _one_exchange(self) -> ProfileSpec:
        if (self.htc_w_m2k is None) == (self.medium is None):
            raise ValueError("a profile gives either htc_w_m2k or medium (with its severity)")
        if self.medium is not None:
            catalog.get_medium(self.medium)
        return self

    def step_fields(self) -> dict[str, Any]:
        """What the profile puts into a step: htc, or medium and severity; emissivity; its name."""
        fields: dict[str, Any] = {"profile": self.name, "emissivity": round(self.emissivity, 6)}
        if self.htc_w_m2k is not None:
            fields["htc"] = f"{self.htc_w_m2k:.6g} W/m^2/K"
        else:
            fields["medium"] = self.medium
            fields["severity"] = round(self.severity or 1.0, 6)
        return fields

    @property
    def exchange_text(self) -> str:
        if self.htc_w_m2k is not None:
            text = f"h {self.htc_w_m2k:.4g} W/m^2/K"
        else:
            text = f"{self.medium} × {self.severity or 1.0:.3g}"
        return text + (f", emissivity {self.emissivity:.3g}" if self.emissivity else "")


def parse_profile(doc: object) -> ProfileSpec:
    """A profile document (API body or file entry) as a ``ProfileSpec``; ``SpecError`` naming each field."""
    if not isinstance(doc, Mapping):
        raise SpecError.single("a profile must be a mapping of fields")
    try:
        return ProfileSpec.model_validate(doc)
    except ValidationError as exc:
        raise SpecError(
            [
                Problem(".".join(str(p) for p in e["loc"]), str(e["msg"]).removeprefix("Value error, "))
                for e in exc.errors()
            ]
        ) from None


_FACE_KEYS = ("htc", "medium", "severity", "emissivity")


def _expand_face(
    face: Mapping[str, Any], path: str, lookup: ProfileLookup
) -> tuple[dict[str, Any], list[Problem]]:
    name = face.get("profile")
    if name is None or not isinstance(name, str):
        return dict(face), []
    given = [k for k in _FACE_KEYS if face.get(k) is not None]
    if given:
        return dict(face), [
            Problem(f"{path}.{given[0]}", f"profile '{name}' sets the exchange; remove {', '.join(given)}")
        ]
    profile = lookup(name)
    if profile is None:
        return dict(face), []  # the step's own rule says the profile is not known
    return {**face, **profile.step_fields()}, []


def expand_profiles(doc: object, lookup: ProfileLookup) -> object:
    """``doc`` with every ``profile: NAME`` of a step or lower face replaced by the profile's values.

    ``SpecError`` when a step gives a profile and its own exchange too. Unknown names are left for the
    step's rule to report (at ``schedule[i].profile``).
    """
    if not isinstance(doc, Mapping) or not isinstance(doc.get("schedule"), list):
        return doc
    problems: list[Problem] = []
    steps: list[Any] = []
    for i, step in enumerate(doc["schedule"]):
        if not isinstance(step, Mapping):
            steps.append(step)
            continue
        new, found = _expand_face(step, f"schedule[{i}]", lookup)
        problems += found
        lower = new.get("lower_face")
        if isinstance(lower, Mapping):
            new["lower_face"], found = _expand_face(lower, f"schedule[{i}].lower_face", lookup)
            problems += found
        steps.append(new)
    if problems:
        raise SpecError(problems)
    return {**doc, "schedule": steps}


def local_profiles_path() -> Path:
    """The CLI's profile file: ``SOAKLINE_PROFILES_FILE``, else profiles.json in the user's data folder."""
    env = os.environ.get("SOAKLINE_PROFILES_FILE")
    return Path(env) if env else Path(user_data_dir("soakline", appauthor=False)) / "profiles.json"


class LocalProfiles:
    """Profiles of the one-machine CLI in one JSON file, written whole through a temporary file."""

    def __init__(self, path: Path | None = None) -> None:
        self.path = path or local_profiles_path()

    def _read(self) -> dict[str, Any]:
        try:
            data = json.loads(self.path.read_text(encoding="utf-8"))
        except FileNotFoundError:
            return {}
        except (OSError, ValueError) as exc:
            raise SpecError.single(f"{self.path}: cannot read the profile file ({exc})") from None
        if not isinstance(data, dict) or not isinstance(data.get("profiles"), dict):
            raise SpecError.single(f"{self.path}: not a soakline profile file")
        return dict(data["profiles"])

    def get(self, name: str) -> ProfileSpec | None:
        raw = self._read().get(name)
        return None if raw is None else parse_profile(raw)

    def names(self) -> list[str]:
        return sorted(self._read())

    def save(self, profile: ProfileSpec) -> None:
        """Add or replace ``profile``; the file is replaced at once or not at all."""
        profiles = self._read()
        profiles[profile.name] = profile.model_dump(mode="json")
        self.path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=self.path.parent, prefix=".profiles-", suffix=".json")
        try:
            with os.fdopen(fd, "w", encoding="utf-8") as fh:
                json.dump({"profiles": profiles}, fh)
            os.replace(tmp, self.path)
        except BaseException:
            Path(tmp).unlink(missing_ok=True)
            raise
