"""Exchange parameters of one schedule step fitted to thermocouple readings, with the engine as the model.

A pure function of engine inputs (``workers.thermal``: parts, steps) and readings (SI, degC): no I/O.
The parameters of the fitted step:

- ``h``: a constant heat transfer coefficient (W/m^2/K) in place of the step's own;
- ``emissivity``: grey-body emissivity of the parts' faces towards the ambient;
- ``severity``: one factor on the step's h(T_surface) curve (a catalog medium's, e.g. an ageing tank);
- ``lag``: the thermocouples' first-order response time (s), ``tau dT_tc/dt = T - T_tc``; one for all.

``scipy.optimize.least_squares`` minimises the readings' residuals within the step (the readings of
earlier steps depend on nothing fitted and later steps are not modelled). Intervals come from the
Jacobian J at the solution and the residual variance s^2 = SSR / (n - p): cov = s^2 (J^T J)^-1, the
half width t(n - p) * sqrt(cov_ii) at the stated level. A thermocouple at a depth in a plate or bar is
read from the engine's core, surface and volume mean through an even quartic in the distance from the
centre (exact for the parabolic profile of small Biot numbers; an approximation while the profile is
still steep near the face).
"""

from __future__ import annotations

import time
from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from typing import Literal

import numpy as np
from numpy.typing import NDArray
from scipy import optimize, stats

from workers.thermal import Curve, Face, PartThermal, Step, Trace, simulate
from workers.thermal.spec import FloatArray

__all__ = [
    "PARAMS",
    "FitError",
    "FitInput",
    "FitOutcome",
    "Param",
    "ParamFit",
    "Reading",
    "fit",
    "model_traces",
]

Param = Literal["h", "emissivity", "severity", "lag"]
PARAMS: tuple[Param, ...] = ("h", "emissivity", "severity", "lag")
NDArrayBool = NDArray[np.bool_]  # which readings of a series lie within the fitted step
UNITS: dict[Param, str] = {"h": "W/m^2/K", "emissivity": "", "severity": "", "lag": "s"}
CORRELATED = 0.95  # |correlation| above which two parameters are reported as not told apart
SAMPLES_PER_STEP = 240
LAG_START_S = 10.0


class FitError(ValueError):
    """The readings or options cannot give a fit; the message says what to change, ``field`` where."""

    def __init__(self, message: str, field: str = "--param") -> None:
        super().__init__(message)
        self.field = field


@dataclass(frozen=True)
class Reading:
    """One thermocouple's readings: in part ``part`` at ``where`` (``xi`` from the centre for a depth)."""

    part: int
    where: Literal["core", "surface", "corner", "depth"]
    xi: float  # 0 at the centre, 1 at the face; used for "depth"
    time_s: FloatArray
    temp_c: FloatArray


@dataclass(frozen=True)
class FitInput:
    parts: Sequence[PartThermal]
    steps: Sequence[Step]
    step: int  # index of the fitted step
    params: tuple[Param, ...]
    readings: Sequence[Reading]
    level: float = 0.95


@dataclass(frozen=True)
class ParamFit:
    name: Param
    value: float
    low: float
    high: float
    std: float
    start: float
    unit: str


@dataclass
class FitOutcome:
    params: list[ParamFit]
    correlation: list[list[float]]
    rms_k: float
    max_k: float
    n: int
    dof: int
    evaluations: int
    seconds: float
    warnings: list[str]
    residuals: list[FloatArray]  # per reading series, model - reading, within the step (NaN outside)
    used: list[NDArrayBool]
    level: float
    window_s: tuple[float, float]
    message: str = ""
    values: dict[str, float] = field(default_factory=dict)


def _starts(inp: FitInput) -> dict[Param, float]:
    face = inp.steps[inp.step].face
    h0 = float(np.mean(face.htc.value))
    eps0 = face.emissivity if face.emissivity > 0 else 0.5
    return {"h": max(h0, 1.0), "emissivity": eps0, "severity": 1.0, "lag": LAG_START_S}


def _bounds(name: Param, start: float) -> tuple[float, float]:
    if name == "emissivity":
        return 1e-3 / start, 1.0 / start
    if name == "lag":
        return 0.0, np.inf
    return 1e-4, np.inf


def fitted_step(step: Step, values: dict[str, float]) -> Step:
    """``step`` with the fitted exchange: a constant h, a scaled h(T_s) curve, an emissivity."""
    face = step.face
    htc = face.htc
    if "h" in values:
        htc = Curve.constant(values["h"])
    if "severity" in values:
        htc = Curve(htc.temp_c, tuple(v * values["severity"] for v in htc.value))
    emissivity = values.get("emissivity", face.emissivity)
    return replace(step, face=Face(htc=htc, emissivity=emissivity))


def _lagged(time_s: FloatArray, temp: FloatArray, tau: float) -> FloatArray:
    """First-order response to ``temp`` (linear between samples), starting at the same temperature."""
    if tau <= 0.0:
        return temp
    out = temp.copy()
    dt = np.diff(time_s)
    decay = np.exp(-dt / tau)
    slope = np.diff(temp) / dt
    for k in range(len(dt)):
        s = slope[k] * tau
        out[k + 1] = temp[k + 1] - s + (out[k] - temp[k] + s) * decay[k]
    return out


def point_curve(trace: Trace, part: PartThermal, r: Reading) -> FloatArray:
    """The engine's temperature at the reading's place, at the trace's times (no lag)."""
    if r.where == "core":
        return trace.core_c
    if r.where == "surface":
        return trace.surface_c
    if r.where == "corner":
        if trace.corner_c is None:
            raise FitError("the engine reports no corner for this part")
        return trace.corner_c
    s = trace.surface_c - trace.core_c
    m = trace.mean_c - trace.core_c
    # T = core + c2 xi^2 + c4 xi^4 through core, surface and the volume mean (weight 1 plate, r bar)
    c4 = 7.5 * (s / 3.0 - m) if part.shape.kind == "plate" else 3.0 * s - 6.0 * m
    c2 = s - c4
    return trace.core_c + c2 * r.xi**2 + c4 * r.xi**4


def model_traces(inp: FitInput, values: dict[str, float]) -> tuple[list[Trace], list[Step]]:
    """The engine's traces through the fitted step with ``values`` (steps after it are not run)."""
    steps = list(inp.steps[: inp.step + 1])
    steps[inp.step] = fitted_step(steps[inp.step], values)
    return simulate(inp.parts, steps, samples_per_step=SAMPLES_PER_STEP), steps


def modelled(
    inp: FitInput, values: dict[str, float], traces: Sequence[Trace]
) -> list[tuple[FloatArray, FloatArray]]:
    """Per reading series: the modelled thermocouple curve (lag included) at the traces' times."""
    tau = values.get("lag", 0.0)
    out = []
    for r in inp.readings:
        tr = traces[r.part]
        out.append((tr.time_s, _lagged(tr.time_s, point_curve(tr, inp.parts[r.part], r), tau)))
    return out


def _window(inp: FitInput) -> tuple[float, float]:
    start = sum(s.duration_s for s in inp.steps[: inp.step])
    return start, start + inp.steps[inp.step].duration_s


def _check(inp: FitInput) -> list[NDArrayBool]:
    if len(set(inp.params)) != len(inp.params) or not inp.params:
        raise FitError("give each parameter once, at least one")
    if "h" in inp.params and "severity" in inp.params:
        raise FitError("fit either h (a constant) or severity (a factor on the medium's curve), not both")
    face = inp.steps[inp.step].face
    if "severity" in inp.params and face.htc.is_constant:
        raise FitError("severity scales a medium's h(T_surface) curve; this step has a constant h: fit h")
    if inp.steps[inp.step].second_face is not None:
        raise FitError("the fitted step has a different lower face; fitting it is not supported", "--step")
    lo, hi = _window(inp)
    used = [(r.time_s > lo) & (r.time_s <= hi * (1 + 1e-12)) for r in inp.readings]
    n = int(sum(u.sum() for u in used))
    need = len(inp.params) + 3
    if n < need:
        raise FitError(
            f"only {n} readings fall within the step ({lo / 60:g} to {hi / 60:g} min from the start); a fit "
            f"of {len(inp.params)} parameter(s) needs at least {need}",
            "readings",
        )
    return used


def fit(inp: FitInput) -> FitOutcome:
    """Least-squares values of ``inp.params`` for step ``inp.step``, intervals and warnings."""
    used = _check(inp)
    starts = _starts(inp)
    scale = np.array([starts[p] for p in inp.params])
    bounds = np.array([_bounds(p, starts[p]) for p in inp.params]).T
    t_obs = [r.time_s[u] for r, u in zip(inp.readings, used, strict=True)]
    y_obs = np.concatenate([r.temp_c[u] for r, u in zip(inp.readings, used, strict=True)])
    calls = 0

    def values_of(x: FloatArray) -> dict[str, float]:
        return {p: float(v) for p, v in zip(inp.params, x * scale, strict=True)}

    def residual(x: FloatArray) -> FloatArray:
        nonlocal calls
        calls += 1
        vals = values_of(x)
        traces, _ = model_traces(inp, vals)
        curves = modelled(inp, vals, traces)
        pred = np.concatenate([np.interp(t, tt, yy) for t, (tt, yy) in zip(t_obs, curves, strict=True)])
        return np.asarray(pred - y_obs, dtype=float)

    began = time.perf_counter()
    x0 = np.clip(np.ones(len(inp.params)), bounds[0], bounds[1])
    res = optimize.least_squares(
        residual,
        x0,
        bounds=(bounds[0], bounds[1]),
        jac="2-point",
        diff_step=1e-3,
        xtol=1e-8,
        ftol=1e-10,
        max_nfev=60,
    )
    seconds = time.perf_counter() - began
    r = np.asarray(res.fun, dtype=float)
    n, p = r.size, len(inp.params)
    dof = n - p
    s2 = float(r @ r) / dof
    jac = np.asarray(res.jac, dtype=float) / scale  # d residual / d parameter (unscaled)
    warnings: list[str] = []
    sv = np.linalg.svd(jac, compute_uv=False)
    singular = sv[-1] <= 1e-10 * sv[0] if sv[0] > 0 else True
    cov = s2 * np.linalg.pinv(jac.T @ jac)
    std = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    tq = float(stats.t.ppf(0.5 + inp.level / 2.0, dof))
    denom = np.outer(std, std)
    corr = np.divide(cov, denom, out=np.zeros_like(cov), where=denom > 0)
    vals = values_of(res.x)
    params = [
        ParamFit(
            name,
            vals[name],
            float(vals[name] - tq * std[i]),
            float(vals[name] + tq * std[i]),
            float(std[i]),
            starts[name],
            UNITS[name],
        )
        for i, name in enumerate(inp.params)
    ]
    for i in range(p):
        for j in range(i + 1, p):
            if abs(corr[i, j]) > CORRELATED:
                a, b = inp.params[i], inp.params[j]
                warnings.append(
                    f"{a} and {b} cannot be told apart from these readings (correlation {corr[i, j]:+.2f}): "
                    f"their values trade off against each other; fix one in the step and fit the other, or "
                    f"record a load that separates them"
                )
    col = np.linalg.norm(jac, axis=0)
    for i, pf in enumerate(params):
        flat = singular and col[i] <= 1e-10 * max(col.max(), 1e-300)
        if flat or tq * std[i] >= abs(pf.value) or not np.isfinite(std[i]):
            warnings.append(
                f"the readings do not constrain {pf.name}: its interval ({pf.low:.4g} to {pf.high:.4g}) "
                f"is as wide as the value itself; fix it in the step or drop it from the fit"
            )
        lo, hi = bounds[0][i] * scale[i], bounds[1][i] * scale[i]
        if np.isclose(pf.value, lo, rtol=1e-6, atol=1e-9) or np.isclose(pf.value, hi, rtol=1e-6):
            warnings.append(
                f"{pf.name} stopped at its bound ({pf.value:.4g}); its interval does not hold there"
            )
    full = [np.full(rd.time_s.shape, np.nan) for rd in inp.readings]
    k = 0
    for f, u in zip(full, used, strict=True):
        m = int(u.sum())
        f[u] = r[k : k + m]
        k += m
    return FitOutcome(
        params=params,
        correlation=corr.tolist(),
        rms_k=float(np.sqrt(np.mean(r**2))),
        max_k=float(np.max(np.abs(r))),
        n=n,
        dof=dof,
        evaluations=calls,
        seconds=seconds,
        warnings=warnings,
        residuals=full,
        used=used,
        level=inp.level,
        window_s=_window(inp),
        message=str(res.message),
        values=vals,
    )
