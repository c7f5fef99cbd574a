"""The import contracts of pyproject.toml ([tool.importlinter]) hold: models <- workers <- scheduler,
a pure thermal engine, and job code that knows no Celery. A back-import anywhere fails this test."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from importlinter.cli import lint_imports

ROOT = Path(__file__).resolve().parents[1]


def test_import_contracts_are_kept(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(ROOT)
    assert os.path.isfile("pyproject.toml")
    assert lint_imports(config_filename="pyproject.toml", no_cache=True, no_logo=True) == 0, (
        "an import breaks a contract of [tool.importlinter] (see the report above)"
    )
