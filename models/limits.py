"""Product limits on a batch file: sizes the service accepts, not physical facts.

They keep a typing slip ("50 m" for "50 mm", "30 d" for "30 min") from becoming a silent hour-long
computation, and bound the work one file can ask for.
"""

from __future__ import annotations

MAX_PARTS = 5000
MAX_STEPS = 50
MAX_TARGETS_PER_PART = 100
MAX_SECTION_M = 2.0
MAX_STEP_S = 30 * 24 * 3600.0
MAX_TEMPERATURE_C = 2000.0
MAX_HTC_W_M2K = 1.0e6
MAX_TEXT = 200
MAX_TABLE_ROWS = 500
MAX_FILE_BYTES = 20 * 1024 * 1024
MAX_CARBON_PCT = 2.1  # above it the alloy is a cast iron, not a steel (from memory: the Fe-C diagram)
MAX_ELEMENT_PCT = 30.0
MAX_ALLOY_PCT = 50.0  # all elements together
GRAIN_SIZE_RANGE = (-1.0, 14.0)  # ASTM E112 numbers 00 (written -1) to 14 (from memory)
HRC_RANGE = (20.0, 68.0)  # the Rockwell C rows of ASTM E140 in catalog/hardness.yaml (from memory)
