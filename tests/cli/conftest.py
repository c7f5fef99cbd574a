"""Batch files on disk for the CLI tests (small, constant properties: fast for the engine)."""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

ROOT = str(Path(__file__).resolve().parents[2])
if ROOT not in sys.path:  # the project's own packages, not the test folders of the same names
    sys.path.insert(0, ROOT)

STEEL = '{conductivity: "40 W/m/K", density: "7850 kg/m^3", specific_heat: "600 J/kg/K"}'

PASSING = f"""\
batch: cli passing load
schedule:
  - {{name: heat, duration: "2 h", ambient: "860 degC", htc: "200 W/m^2/K"}}
  - {{name: quench, duration: "20 min", ambient: "60 degC", htc: "2000 W/m^2/K"}}
parts:
  - id: thin
    shape: plate
    thickness: "20 mm"
    material: {STEEL}
    initial: "20 degC"
    targets:
      - {{step: heat, at: core, hold_above: "845 degC", for: "30 min"}}
      - {{step: quench, at: core, fall_below: "200 degC", within: "8 min"}}
"""

FLAGGED = (
    PASSING.replace("cli passing load", "cli flagged load")
    + f"""\
  - id: thick
    shape: bar
    diameter: "200 mm"
    material: {STEEL}
    initial: "20 degC"
    targets:
      - {{step: heat, at: core, hold_above: "845 degC", for: "30 min"}}
"""
)


@pytest.fixture
def write(tmp_path: Path):  # type: ignore[no-untyped-def]
    def _write(text: str, name: str = "batch.yaml") -> Path:
        path = tmp_path / name
        path.write_text(text, encoding="utf-8")
        return path

    return _write
