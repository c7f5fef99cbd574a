"""Time the exchange fit: engine runs per fit and seconds, on plate and bar records, in one run.

Cases (records made by the engine itself with a lag and noise; the truth is printed beside the fit):
- linear: a constant-property plate in a furnace with constant h (the exact series), fitting h and lag;
- radiation: the same plate with emissivity, fitting emissivity (the 1-D march);
- quench: a bar of a catalog steel (k(T), cp(T)) in an oil with a scaled h(T_s), fitting severity
  and lag (the 1-D march);
- demo: the bundled demo record (scheduler/demo/record.yaml), its heat and its quench step, through
  the same path as `soakline fit` (record file -> fit -> report).

Run from the repository root:  .venv/bin/python tests/bench/bench_fit.py [--only linear]
"""

from __future__ import annotations

import argparse
import sys
import time
from collections.abc import Callable
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

import numpy as np  # noqa: E402

from models import get_material  # noqa: E402
from models.records import load_record_file  # noqa: E402
from tests.fit.support import bar, engine_readings, plate  # noqa: E402
from workers.convert import to_material  # noqa: E402
from workers.fit import FitInput, FitOutcome, fit  # noqa: E402
from workers.fitting import fit_record  # noqa: E402
from workers.thermal import Curve, Face, Step  # noqa: E402


def _linear() -> tuple[FitOutcome, str]:
    part = plate(0.05)
    times = np.arange(0.0, 7200.0 + 1, 60.0)
    truth = [Step(7200.0, 860.0, Face(Curve.constant(150.0)))]
    r = engine_readings(
        [part], truth, [(0, "core", 0.0), (0, "surface", 0.0)], times, lag_s=15.0, noise_k=1.5, seed=1
    )
    return fit(
        FitInput([part], [Step(7200.0, 860.0, Face(Curve.constant(100.0)))], 0, ("h", "lag"), r)
    ), "h 150, lag 15"


def _radiation() -> tuple[FitOutcome, str]:
    part = plate(0.03)
    times = np.arange(0.0, 3600.0 + 1, 60.0)
    truth = [Step(3600.0, 860.0, Face(Curve.constant(40.0), 0.7))]
    r = engine_readings([part], truth, [(0, "core", 0.0)], times, lag_s=0.0, noise_k=1.0, seed=11)
    return fit(
        FitInput([part], [Step(3600.0, 860.0, Face(Curve.constant(40.0), 0.5))], 0, ("emissivity",), r)
    ), "emissivity 0.7"


def _quench() -> tuple[FitOutcome, str]:
    steel = to_material(get_material("4140"))
    curve = Curve((100.0, 300.0, 500.0, 700.0, 850.0), (600.0, 2500.0, 1800.0, 500.0, 400.0))
    part = bar(0.06, steel, 850.0)
    truth = [Step(600.0, 60.0, Face(Curve(curve.temp_c, tuple(0.8 * v for v in curve.value))))]
    times = np.arange(0.0, 600.0 + 1, 10.0)
    r = engine_readings(
        [part], truth, [(0, "core", 0.0), (0, "surface", 0.0)], times, lag_s=3.0, noise_k=1.5, seed=7
    )
    return fit(
        FitInput([part], [Step(600.0, 60.0, Face(curve))], 0, ("severity", "lag"), r)
    ), "severity 0.8, lag 3"


def _demo(step: str) -> Callable[[], tuple[FitOutcome, str]]:
    def run() -> tuple[FitOutcome, str]:
        rec = load_record_file(ROOT / "scheduler" / "demo" / "record.yaml")
        params = ("h", "lag") if step == "heat" else ("severity", "lag")
        truth = "h 140, lag 8" if step == "heat" else "severity 0.8, lag 8"
        return fit_record(rec, step, params).outcome, truth

    return run


CASES: dict[str, Callable[[], tuple[FitOutcome, str]]] = {
    "linear": _linear,
    "radiation": _radiation,
    "quench": _quench,
    "demo-heat": _demo("heat"),
    "demo-quench": _demo("quench"),
}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--only", choices=sorted(CASES))
    args = parser.parse_args()
    print(f"{'case':<12} {'runs':>5} {'fit s':>7} {'s/run':>7} {'wall s':>7}  fitted (truth)")
    for name, case in CASES.items():
        if args.only and name != args.only:
            continue
        began = time.perf_counter()
        out, truth = case()
        wall = time.perf_counter() - began
        fitted = ", ".join(f"{p.name} {p.value:.4g} [{p.low:.4g}, {p.high:.4g}]" for p in out.params)
        print(
            f"{name:<12} {out.evaluations:>5} {out.seconds:>7.2f} {out.seconds / out.evaluations:>7.3f} "
            f"{wall:>7.2f}  {fitted} ({truth}); RMS {out.rms_k:.2f} K"
        )


if __name__ == "__main__":
    main()
