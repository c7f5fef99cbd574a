"""Time the thermal engine on a furnace batch and the method-of-lines reference on a sample of it.

The batch: plates and bars of mixed sizes and steels through one schedule (radiant heating with a ramp,
soak, oil quench with h(T_s), temper in a furnace with air), full traces. The engine runs the whole
batch in one call. The reference then runs a sample of the same parts "at matched accuracy": for each
sampled part a fine Richardson-extrapolated reference (not timed) gives the engine's error, and the
cheapest reference setting on a ladder of grids and tolerances that is at least as accurate (and within
1 K) is timed. Prints seconds per part-step for both and their ratio.

Run from the repository root:  .venv/bin/python tests/bench/bench_engine.py [--parts 1000] [--sample 10]
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from tests.reference.cases import CR_MO_STEEL, EUROCODE_STEEL, heat_treat_schedule  # noqa: E402
from tests.reference.mol import MolResult, solve  # noqa: E402
from workers.thermal import Tolerance, simulate  # noqa: E402
from workers.thermal.spec import FloatArray, PartThermal, Shape, ShapeName, Step, Trace  # noqa: E402

# cheapest first: (cells, rtol)
LADDER = [(8, 1e-4), (12, 1e-5), (16, 1e-5), (24, 1e-6), (32, 1e-6), (48, 1e-7), (64, 1e-7), (96, 1e-8)]
WORST_ALLOWED_K = 1.0  # the project's acceptance for nonlinear steps


def batch(n: int, materials: str, seed: int) -> list[PartThermal]:
    rng = np.random.default_rng(seed)
    parts = []
    for i in range(n):
        kind: ShapeName = "plate" if i % 2 == 0 else "bar"
        size = float(rng.uniform(0.005, 0.06) if kind == "plate" else rng.uniform(0.005, 0.075))
        if materials == "mixed":
            mat = EUROCODE_STEEL if rng.random() < 0.5 else CR_MO_STEEL
        else:
            mat = EUROCODE_STEEL if materials == "eurocode" else CR_MO_STEEL
        parts.append(PartThermal(Shape(kind, (size,)), mat, 20.0))
    return parts


def max_error(a_core: FloatArray, a_surf: FloatArray, ref: MolResult) -> float:
    return max(float(np.max(np.abs(a_core - ref.core_c))), float(np.max(np.abs(a_surf - ref.surface_c))))


def matched_reference(part: PartThermal, steps: list[Step], tr: Trace) -> tuple[float, float, float, str]:
    """Engine error, timed reference seconds, reference error, and the setting used."""
    fine = solve(part, steps, tr.time_s, cells=80, rtol=1e-8, atol=1e-8, richardson=True)
    engine_err = max_error(tr.core_c, tr.surface_c, fine)
    target = min(engine_err, WORST_ALLOWED_K)
    for cells, rtol in LADDER:
        t0 = time.perf_counter()
        res = solve(part, steps, tr.time_s, cells=cells, rtol=rtol, atol=rtol)
        seconds = time.perf_counter() - t0
        err = max_error(res.core_c, res.surface_c, fine)
        if err <= target:
            return engine_err, seconds, err, f"{cells} cells, rtol {rtol:g}"
    return engine_err, seconds, err, f"{cells} cells, rtol {rtol:g} (finest tried, still less accurate)"


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--parts", type=int, default=1000)
    ap.add_argument("--sample", type=int, default=10)
    ap.add_argument("--samples-per-step", type=int, default=120)
    ap.add_argument("--materials", choices=["mixed", "constant", "eurocode"], default="mixed")
    ap.add_argument("--seed", type=int, default=7)
    args = ap.parse_args()

    steps = heat_treat_schedule()
    parts = batch(args.parts, args.materials, args.seed)
    n_steps = len(steps)
    print(
        f"batch: {args.parts} parts ({args.materials} steels), {n_steps} steps, "
        f"{args.samples_per_step} samples per step",
        file=sys.stderr,
    )

    t0 = time.perf_counter()
    traces = simulate(parts, steps, samples_per_step=args.samples_per_step, tol=Tolerance())
    engine_s = time.perf_counter() - t0
    engine_per = engine_s / (args.parts * n_steps)
    print(f"engine: {engine_s:.2f} s for the batch", file=sys.stderr)

    pick = np.linspace(0, args.parts - 1, args.sample).round().astype(int)
    mol_s = 0.0
    rows = []
    for j, i in enumerate(pick, start=1):
        part = parts[i]
        engine_err, seconds, ref_err, setting = matched_reference(part, steps, traces[i])
        mol_s += seconds
        mat = "k(T),cp(T)" if not part.material.is_constant else "constant"
        rows.append(
            (i, part.shape.kind, part.shape.half_sizes_m[0] * 1e3, mat, engine_err, ref_err, setting, seconds)
        )
        print(f"  reference {j}/{len(pick)}: part {i} done", file=sys.stderr)
    mol_per = mol_s / (len(pick) * n_steps)

    print(
        f"engine:    {args.parts} parts x {n_steps} steps, {engine_s:.3f} s: {engine_per:.3e} s per part-step"
    )
    print(f"reference: {len(pick)} parts x {n_steps} steps, {mol_s:.3f} s: {mol_per:.3e} s per part-step")
    print(f"ratio reference / engine per part-step: {mol_per / engine_per:.1f}")
    print("sample (error = max over core and surface against a fine Richardson reference):")
    head = ("part", "shape", "half mm", "props", "engine K", "ref K", "ref s")
    print("{:>5} {:>5} {:>8} {:>10} {:>9} {:>9} {:>7}  setting".format(*head))
    for i, kind, size, mat, e_err, r_err, setting, sec in rows:
        print(f"{i:>5} {kind:>5} {size:8.1f} {mat:>10} {e_err:9.3g} {r_err:9.3g} {sec:7.3f}  {setting}")


if __name__ == "__main__":
    main()
