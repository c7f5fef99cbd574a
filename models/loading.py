"""Turn a document or a YAML/JSON file into a ``BatchSpec``, or a ``SpecError`` listing every problem.

Bad input never escapes as a traceback: unreadable files, syntax errors (with line and column), empty
files, a wrong top level and every field problem all become ``Problem``s with a field path such as
``parts[2].thickness``.
"""

from __future__ import annotations

import difflib
import json
import os
from collections.abc import Mapping
from functools import cache
from pathlib import Path
from typing import Any

import yaml
from pydantic import BaseModel, ValidationError

from models import limits, units
from models.errors import Problem, SpecError
from models.parts import InlineMaterialSpec, PartSpec
from models.profiles import ProfileLookup, expand_profiles
from models.spec import BatchSpec
from models.steps import LowerFaceSpec, StepSpec
from models.targets import TargetSpec
from models.text import value_problems

_MODELS: tuple[type[BaseModel], ...] = (
    BatchSpec,
    StepSpec,
    LowerFaceSpec,
    PartSpec,
    InlineMaterialSpec,
    TargetSpec,
)


def format_path(loc: tuple[str | int, ...]) -> str:
    """``("parts", 2, "thickness")`` -> ``"parts[2].thickness"``."""
    out = ""
    for item in loc:
        name = str(item) or "''"  # an empty field name must still show where it is
        out += f"[{item}]" if isinstance(item, int) else (f".{name}" if out else name)
    return out


@cache
def _field_names() -> tuple[str, ...]:
    names = {f.alias or n for m in _MODELS for n, f in m.model_fields.items()}
    return tuple(sorted(names))


def _type_name(value: object) -> str:
    if isinstance(value, list):
        return "a list"
    if isinstance(value, Mapping):
        return "a mapping"
    if isinstance(value, str):
        return f"the text '{value}'"
    return repr(value)


def _message(error: Mapping[str, Any]) -> str:
    kind, msg, loc = error["type"], str(error["msg"]), error["loc"]
    if kind == "missing":
        return "required"
    if kind == "extra_forbidden":
        name = str(loc[-1]) if loc else ""
        close = difflib.get_close_matches(name, _field_names(), n=1)
        return "unknown field" + (f"; did you mean '{close[0]}'?" if close else "")
    if kind in ("model_type", "dict_type", "model_attributes_type"):
        return f"expected a mapping of fields (key: value), got {_type_name(error.get('input'))}"
    if kind == "list_type":
        return f"expected a list, got {_type_name(error.get('input'))}"
    if kind == "literal_error":
        return f"{msg.replace('Input should be', 'must be')}, got {_type_name(error.get('input'))}"
    return msg


def problems_from(exc: ValidationError) -> list[Problem]:
    """Pydantic's errors as ``Problem``s, in file order, without repeats."""
    seen: dict[tuple[str, str], tuple[tuple[int, int], Problem]] = {}
    sections: dict[object, int] = {}
    for error in exc.errors():
        loc = tuple(error["loc"])
        problem = Problem(format_path(loc), _message(error))
        # group by top-level section and item (schedule[1], parts[3]) so the list reads in file order
        order = (sections.setdefault(loc[0] if loc else "", len(sections)), _index(loc))
        seen.setdefault((problem.path, problem.message), (order, problem))
    return [problem for _, problem in sorted(seen.values(), key=lambda item: item[0])]


def _index(loc: tuple[object, ...]) -> int:
    return loc[1] if len(loc) > 1 and isinstance(loc[1], int) else -1


def _size_problems(doc: Mapping[str, Any], max_parts: int) -> list[Problem]:
    """Counts checked before anything else, so that an oversized file is refused at once."""
    out = []
    for key, what, most in (("parts", "part", max_parts), ("schedule", "step", limits.MAX_STEPS)):
        items = doc.get(key)
        if isinstance(items, list) and len(items) > most:
            out.append(Problem(key, f"a batch holds at most {most} {what}s, got {len(items)}"))
    return out


def parse_batch(
    doc: object, *, max_parts: int = limits.MAX_PARTS, profiles: ProfileLookup | None = None
) -> BatchSpec:
    """Validate a parsed document (mapping from YAML, JSON or an API body) as a batch.

    Before the fields are checked: the part and step counts (``max_parts`` may be lower than the
    product limit, a service setting), then every string and number for what cannot be stored
    (``models.text``: NUL and control characters, lone surrogates, NaN and infinities). ``profiles``
    looks up the exchange profiles that steps name (``profile: NAME``); without it a step must carry
    its exchange itself (as a stored batch does, the profile's values already written in).
    """
    if not isinstance(doc, Mapping):
        raise SpecError.single(
            f"the top level must be a mapping with batch, schedule and parts; got {_type_name(doc)}"
        )
    if sized := _size_problems(doc, min(max_parts, limits.MAX_PARTS)):
        raise SpecError(sized)
    if raw := value_problems(doc):
        raise SpecError([Problem(format_path(loc), message) for loc, message in raw])
    if profiles is not None:
        doc = expand_profiles(doc, profiles)
    try:
        return BatchSpec.model_validate(doc)
    except ValidationError as exc:
        raise SpecError(problems_from(exc)) from None


def with_step_durations(spec: BatchSpec, durations: Mapping[str, str]) -> BatchSpec:
    """A copy of ``spec`` with new step durations ({"heat": "4 h"}), checked like a file (for reruns)."""
    known = [step.name for step in spec.schedule]
    unknown = [name for name in durations if name not in known]
    if unknown:
        raise SpecError.single(
            f"no step named {', '.join(map(repr, unknown))}; steps: {', '.join(known)}", "schedule"
        )
    doc = spec.model_dump(by_alias=True, exclude_none=True)
    for step in doc["schedule"]:
        step["duration"] = durations.get(step["name"], step["duration"])
    return parse_batch(doc)


def with_durations(spec: BatchSpec, durations: Mapping[str, str]) -> BatchSpec:
    """A rerun's spec: the named steps' durations replaced ({"heat": "4 h"}) and checked once.

    Problems are reported at ``durations.STEP``: unknown steps, values that are not positive times,
    and any rule of the file the new durations break (a hold longer than its step).
    """
    names = [s.name for s in spec.schedule]
    problems = [
        Problem(f"durations.{name}", f"no step named '{name}' in the schedule; steps: {', '.join(names)}")
        for name in durations
        if name not in names
    ]
    for name, text in durations.items():
        if name not in names:
            continue
        try:
            seconds = units.parse_time(text)
        except ValueError as exc:
            problems.append(Problem(f"durations.{name}", str(exc)))
            continue
        if not seconds > 0.0:
            problems.append(Problem(f"durations.{name}", f"must be more than zero, got '{text}'"))
    if problems:
        raise SpecError(problems)
    try:
        return with_step_durations(spec, dict(durations))
    except SpecError as exc:
        step_paths = {format_path(("schedule", i, "duration")): name for i, name in enumerate(names)}
        raise SpecError(
            [
                Problem(f"durations.{step_paths[p.path]}", p.message) if p.path in step_paths else p
                for p in exc.problems
            ]
        ) from None


class _UniqueKeyLoader(yaml.SafeLoader):
    """Safe YAML loader that rejects a key given twice in one mapping instead of keeping the last."""


def _construct_mapping(
    loader: _UniqueKeyLoader, node: yaml.MappingNode, deep: bool = False
) -> dict[Any, Any]:
    seen: set[str | int | float] = set()
    for key_node, _ in node.value:
        key = loader.construct_object(key_node, deep=deep)
        if not isinstance(key, str | int | float):
            continue  # unhashable keys get the loader's own error
        if key in seen:
            raise yaml.constructor.ConstructorError(
                None, None, f"the key '{key}' appears twice in one mapping", key_node.start_mark
            )
        seen.add(key)
    return loader.construct_mapping(node, deep=deep)


_UniqueKeyLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, _construct_mapping)


def _yaml_problem(exc: yaml.YAMLError) -> str:
    mark = getattr(exc, "problem_mark", None) or getattr(exc, "context_mark", None)
    what = getattr(exc, "problem", None) or str(exc)
    where = f" at line {mark.line + 1}, column {mark.column + 1}" if mark is not None else ""
    return f"YAML syntax error{where}: {what}"


def _parse_text(text: str, file: Path) -> object:
    if file.suffix.lower() == ".json":
        try:
            return json.loads(text)
        except json.JSONDecodeError as exc:
            raise SpecError.single(
                f"{file}: JSON syntax error at line {exc.lineno}, column {exc.colno}: {exc.msg}"
            ) from None
    try:
        return yaml.load(text, Loader=_UniqueKeyLoader)
    except yaml.YAMLError as exc:
        raise SpecError.single(f"{file}: {_yaml_problem(exc)}") from None


def _read_text(file: Path) -> str:
    try:
        if file.stat().st_size > limits.MAX_FILE_BYTES:
            raise SpecError.single(f"{file}: larger than {limits.MAX_FILE_BYTES // (1024 * 1024)} MB")
        return file.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise SpecError.single(f"{file}: no such file") from None
    except IsADirectoryError:
        raise SpecError.single(f"{file}: is a directory, not a batch file") from None
    except PermissionError:
        raise SpecError.single(f"{file}: permission denied") from None
    except UnicodeDecodeError:
        raise SpecError.single(f"{file}: not a UTF-8 text file") from None
    except OSError as exc:
        raise SpecError.single(f"{file}: cannot be read ({exc.strerror or exc})") from None


def read_document(file: Path) -> tuple[str, object]:
    """A file's text and the document it holds (JSON when it ends in .json, YAML otherwise); an empty
    file, or one that holds no data, is a problem naming the file."""
    text = _read_text(file)
    if not text.strip():
        raise SpecError.single(f"{file}: the file is empty")
    doc = _parse_text(text, file)
    if doc is None:
        raise SpecError.single(f"{file}: the file holds no data (only comments?)")
    return text, doc


def load_batch_file(path: str | os.PathLike[str], profiles: ProfileLookup | None = None) -> BatchSpec:
    """Read and validate a batch file: JSON when it ends in .json, YAML otherwise."""
    _, doc = read_document(Path(path))
    return parse_batch(doc, profiles=profiles)
