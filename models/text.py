"""Text and numbers from outside that can be stored, shown and linked: the checks every input passes.

A batch file or API body reaches PostgreSQL (JSON columns, text columns), HTML pages, URLs and CSV
headers. NUL and other control characters, lone UTF-16 surrogates (which JSON's ``\\ud800`` escapes
can produce) and non-finite numbers (``NaN``, ``Infinity``, ``1e400``) cannot be stored as JSON or
text, so they are reported at their field path before anything else is checked. Part ids are used in
page addresses, API paths and file names: :func:`part_id_problem` keeps them to a safe set.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from typing import Any

__all__ = [
    "PART_ID_CHARACTERS",
    "ValueProblem",
    "part_id_problem",
    "text_problem",
    "value_problems",
]

# C0 controls but tab, line feed and carriage return (a comment may span lines), and DEL.
_CONTROL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]")
_LINE_BREAK = re.compile(r"[\t\n\r\x85\u2028\u2029]")
_SURROGATE = re.compile(r"[\ud800-\udfff]")
PART_ID_CHARACTERS = "letters, digits, spaces and - _ . + ( ) , :"
_PART_ID_PUNCTUATION = set(" -_.+(),:")
# Beyond this depth a document is not a batch file but an attempt to exhaust the parser.
MAX_DEPTH = 32

ValueProblem = tuple[tuple[str | int, ...], str]


def _char(ch: str) -> str:
    return f"U+{ord(ch):04X}"


def text_problem(value: str, *, single_line: bool = False) -> str | None:
    """Why ``value`` cannot be stored or shown as text, or None when it can."""
    if (found := _SURROGATE.search(value)) is not None:
        return f"contains a lone surrogate ({_char(found.group())}), which is not text; send UTF-8"
    if (found := _CONTROL.search(value)) is not None:
        return f"contains the control character {_char(found.group())}; remove it"
    if single_line and (found := _LINE_BREAK.search(value)) is not None:
        return f"contains a tab or line break ({_char(found.group())}); keep it on one line"
    return None


def value_problems(doc: Any, path: tuple[str | int, ...] = (), depth: int = 0) -> list[ValueProblem]:
    """Every string (keys too) that is not storable text and every non-finite number in ``doc``."""
    if depth > MAX_DEPTH:
        return [(path, f"nested deeper than {MAX_DEPTH} levels")]
    if isinstance(doc, str):
        problem = text_problem(doc)
        return [] if problem is None else [(path, problem)]
    if isinstance(doc, float) and not math.isfinite(doc):
        return [(path, f"the number {doc!r} is not finite; expected a finite number")]
    out: list[ValueProblem] = []
    if isinstance(doc, Mapping):
        for key, value in doc.items():
            name = str(key)
            problem = text_problem(name, single_line=True)
            if problem is not None:
                out.append(((*path, ascii(name)), f"field name {problem}"))
                continue
            out += value_problems(value, (*path, name), depth + 1)
    elif isinstance(doc, list | tuple):
        for i, value in enumerate(doc):
            out += value_problems(value, (*path, i), depth + 1)
    return out


def part_id_problem(value: str) -> str | None:
    """Why ``value`` cannot be a part id (shown in addresses, API paths and CSV file names), or None."""
    problem = text_problem(value, single_line=True)
    if problem is not None:
        return problem
    for ch in value:
        if not (ch.isalnum() or ch in _PART_ID_PUNCTUATION):
            return f"'{ch}' is not allowed in a part id; use {PART_ID_CHARACTERS}"
    if set(value) <= {"."}:
        return "a part id of dots only cannot be used in a page address; add a letter or digit"
    return None
