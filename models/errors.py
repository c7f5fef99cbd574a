"""Errors a user can act on: what is wrong in a batch file, and where."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Problem:
    """One thing wrong with the input. ``path`` names the field (``parts[2].thickness``); "" is the file."""

    path: str
    message: str

    def __str__(self) -> str:
        return f"{self.path}: {self.message}" if self.path else self.message


class SpecError(Exception):
    """A batch file or document that cannot be used, with every problem found in it."""

    def __init__(self, problems: list[Problem]) -> None:
        self.problems = list(problems)
        super().__init__("\n".join(str(p) for p in self.problems))

    @classmethod
    def single(cls, message: str, path: str = "") -> SpecError:
        return cls([Problem(path, message)])
