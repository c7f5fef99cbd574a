"""Shared inputs of the models tests: a small batch file in the README's format, as text and as a document."""

from __future__ import annotations

import copy
from typing import Any

import pytest
import yaml

DESIGN_EXAMPLE = """\
batch: "LD-0417 frame plates"          # label
schedule:                               # every part of the batch runs these steps in order
  - name: heat                          # unique; targets refer to it
    duration: "3 h"
    ambient: "860 degC"                 # furnace or bath temperature (end of ramp if ramping)
    ambient_start: "400 degC"           # optional: linear ramp from here to `ambient`
    htc: "150 W/m^2/K"                  # or `medium: <catalog name>` (h may depend on surface T)
    emissivity: 0.8                     # optional: radiation exchange with the ambient
  - name: quench
    duration: "10 min"
    ambient: "60 degC"
    medium: oil-agitated
parts:
  - id: P-101                           # unique in the batch
    shape: plate                        # plate | bar | block | cylinder
    thickness: "50 mm"                  # plate, block (with width, length); bar: diameter; cylinder: ...
    material: "4140"                    # catalog name, or inline: {conductivity, density, specific_heat}
    initial: "20 degC"
    targets:
      - {step: heat, at: core, hold_above: "845 degC", for: "30 min"}
      - {step: heat, at: surface, stay_below: "900 degC"}
      - {step: quench, at: core, fall_below: "200 degC", within: "8 min"}
"""

_DOC: dict[str, Any] = yaml.safe_load(DESIGN_EXAMPLE)


@pytest.fixture
def doc() -> dict[str, Any]:
    """A fresh, valid batch document to break in one place."""
    return copy.deepcopy(_DOC)


@pytest.fixture
def design_text() -> str:
    """The batch file as written, comments included."""
    return DESIGN_EXAMPLE
