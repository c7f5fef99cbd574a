"""Time the soak suggestion: the exact reading (one run at an upper bound, one confirming run) against the
search by trial durations it replaces where it can, on the same batches, in one run.

Batches: the bundled demo (soak), a die-block load (blocks are marched on 3-D grids: the dearest parts),
and a load of plates on a hearth. For each: runs of the batch per suggestion and seconds, both ways,
the two answers, and the ratio of seconds.

Run from the repository root:  .venv/bin/python tests/bench/bench_suggest.py [--only demo]
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[2]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from models import BatchSpec, load_batch_file, parse_batch  # noqa: E402
from workers.suggest import suggest  # noqa: E402

# Invented loads for the benchmark (demo data).
DIE_BLOCKS: dict[str, Any] = {
    "batch": "bench: die blocks",
    "schedule": [
        {
            "name": "ramp",
            "duration": "2 h",
            "ambient_start": "500 degC",
            "ambient": "845 degC",
            "medium": "furnace",
        },
        {"name": "soak", "duration": "3 h", "ambient": "845 degC", "medium": "furnace"},
    ],
    "parts": [
        {
            "id": f"DB-{i}",
            "shape": "block",
            "thickness": size,
            "width": "300 mm",
            "length": "400 mm",
            "material": "4140",
            "initial": "20 degC",
            "targets": [{"step": "soak", "at": "core", "hold_above": "830 degC", "for": "1 h"}],
        }
        for i, size in enumerate(("150 mm", "200 mm"))
    ],
}
HEARTH_PLATES: dict[str, Any] = {
    "batch": "bench: wear plates on a hearth",
    "schedule": [
        {
            "name": "soak",
            "duration": "2 h",
            "ambient": "860 degC",
            "medium": "furnace",
            "emissivity": 0.8,
            "lower_face": {"htc": "30 W/m^2/K", "emissivity": 0.0},
        }
    ],
    "parts": [
        {
            "id": f"WP-{i}",
            "shape": "plate",
            "thickness": f"{20 + 10 * i} mm",
            "material": "1045",
            "initial": "20 degC",
            "targets": [
                {"step": "soak", "at": "underside", "hold_above": "830 degC", "for": "30 min"},
                {"step": "soak", "at": "surface", "stay_below": "870 degC"},
            ],
        }
        for i in range(8)
    ],
}


def cases() -> dict[str, tuple[BatchSpec, str]]:
    return {
        "demo": (load_batch_file(ROOT / "scheduler" / "demo" / "demo.yaml"), "soak"),
        "die blocks": (parse_batch(DIE_BLOCKS), "soak"),
        "hearth plates": (parse_batch(HEARTH_PLATES), "soak"),
    }


def timed(spec: BatchSpec, step: str, method: str) -> tuple[float, dict[str, Any]]:
    t0 = time.perf_counter()
    answer = dict(suggest(spec, step, method="search" if method == "search" else "auto"))
    return time.perf_counter() - t0, answer


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0] if __doc__ else None)
    parser.add_argument("--only", help="one case: demo, die blocks or hearth plates")
    args = parser.parse_args()
    print("| batch | step | search: runs, s, answer | exact: runs, s, answer | seconds, search / exact |")
    print("|---|---|---|---|---|")
    for name, (spec, step) in cases().items():
        if args.only and args.only != name:
            continue
        before_s, before = timed(spec, step, "search")
        after_s, after = timed(spec, step, "auto")
        print(
            f"| {name} ({len(spec.parts)} parts) | {step} | {before['simulations']}, {before_s:.1f} s, "
            f"{before['duration']} | {after['simulations']}, {after_s:.1f} s, {after['duration']} "
            f"({after['method']}) | {before_s / after_s:.1f} |",
            flush=True,
        )


if __name__ == "__main__":
    main()
