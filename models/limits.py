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
