"""A thermocouple record's step fitted (``workers.fit``) and turned into a report and an exchange profile.

The record (``models.records``) gives the schedule, the parts and the readings; this module checks the
step and the parameters asked for, converts to the engine's inputs, runs the fit and writes what the CLI
prints and saves: the report (JSON) and a ``ProfileSpec`` with its provenance and the chart's series.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, cast

import numpy as np

from models.errors import Problem, SpecError
from models.profiles import CAUTION, ProfileSeries, ProfileSpec, parse_profile
from models.records import Record
from workers.convert import to_part, to_step
from workers.fit import PARAMS, FitError, FitInput, FitOutcome, Param, Reading, fit, model_traces, modelled

__all__ = ["RecordFit", "default_params", "fit_record"]

CHART_POINTS = 600  # the modelled curves are thinned to about this many points per thermocouple


@dataclass
class RecordFit:
    record: Record
    step: str
    inp: FitInput
    outcome: FitOutcome
    series: list[ProfileSeries]

    def report(self) -> dict[str, Any]:
        """What ``soakline fit --json`` writes."""
        o = self.outcome
        return {
            "record": self.record.label,
            "date": self.record.date.isoformat(),
            "step": self.step,
            "window_s": list(o.window_s),
            "level": o.level,
            "params": [
                {
                    "name": p.name,
                    "value": p.value,
                    "low": p.low,
                    "high": p.high,
                    "std": p.std,
                    "start": p.start,
                    "unit": p.unit,
                }
                for p in o.params
            ],
            "correlation": {"params": [p.name for p in o.params], "matrix": o.correlation},
            "rms_k": o.rms_k,
            "max_k": o.max_k,
            "readings": o.n,
            "evaluations": o.evaluations,
            "seconds": o.seconds,
            "warnings": o.warnings,
            "caution": CAUTION,
        }

    def profile(self, name: str, description: str = "") -> ProfileSpec:
        """The fit as a named exchange profile (validated like one sent to the API)."""
        o = self.outcome
        spec = self.record.batch.step(self.step)
        vals = o.values
        doc: dict[str, Any] = {
            "name": name,
            "emissivity": vals.get("emissivity", spec.emissivity_value),
            "lag_s": vals.get("lag"),
            "step": self.step,
            "ambient": spec.ambient,
            "record": self.record.label,
            "record_date": self.record.date.isoformat(),
            "fitted_at": dt.datetime.now(dt.UTC).isoformat(timespec="seconds"),
            "level": o.level,
            "params": [
                {"name": p.name, "value": p.value, "low": p.low, "high": p.high, "unit": p.unit}
                for p in o.params
            ],
            "rms_k": o.rms_k,
            "max_k": o.max_k,
            "readings": o.n,
            "warnings": o.warnings,
            "series": [s.model_dump() for s in self.series],
            "description": description,
        }
        if "severity" in vals:
            doc["medium"] = spec.medium
            doc["severity"] = vals["severity"] * (spec.severity or 1.0)
        elif "h" in vals:
            doc["htc_w_m2k"] = vals["h"]
        elif spec.medium is not None:
            doc["medium"] = spec.medium
            doc["severity"] = spec.severity or 1.0
        else:
            doc["htc_w_m2k"] = spec.htc_w_m2k
        return parse_profile(doc)


def default_params(record: Record, step: str) -> tuple[Param, ...]:
    """A medium's step fits its severity, a step with a constant h fits h."""
    return ("severity",) if record.batch.step(step).medium is not None else ("h",)


def _param_names(params: Sequence[str]) -> tuple[Param, ...]:
    bad = [p for p in params if p not in PARAMS]
    if bad:
        raise SpecError.single(
            f"unknown parameter {', '.join(bad)}; choose from {', '.join(PARAMS)}", "--param"
        )
    return cast(tuple[Param, ...], tuple(params))


def _readings(record: Record) -> tuple[list[Reading], list[tuple[str, str, str]]]:
    out: list[Reading] = []
    names: list[tuple[str, str, str]] = []
    for i, (part, spec) in enumerate(zip(record.parts, record.batch.parts, strict=True)):
        half = spec.half_sizes_m[0]
        for tc in part.thermocouples:
            xi = 1.0 - tc.depth_m / half if tc.where == "depth" else 0.0
            out.append(Reading(i, tc.where, xi, np.array(tc.time_s), np.array(tc.temp_c)))
            names.append((part.id, tc.name, tc.position))
    return out, names


def _thin(t: np.ndarray, y: np.ndarray) -> tuple[list[float], list[float]]:
    step = max(1, len(t) // CHART_POINTS)
    idx = np.unique(np.r_[np.arange(0, len(t), step), len(t) - 1])
    return [float(v) for v in t[idx]], [round(float(v), 3) for v in y[idx]]


def fit_record(
    record: Record, step: str, params: Sequence[str] | None = None, level: float = 0.95
) -> RecordFit:
    """Fit ``params`` (default: ``default_params``) of the record's step ``step``; SpecError if unusable."""
    names = record.step_names()
    if step not in names:
        raise SpecError.single(
            f"no step named '{step}' in the record's schedule; steps: {', '.join(names)}", "--step"
        )
    chosen = _param_names(params) if params else default_params(record, step)
    readings, labels = _readings(record)
    inp = FitInput(
        parts=[to_part(p) for p in record.batch.parts],
        steps=[to_step(s) for s in record.batch.schedule],
        step=names.index(step),
        params=chosen,
        readings=readings,
        level=level,
    )
    try:
        outcome = fit(inp)
    except FitError as exc:
        raise SpecError([Problem(exc.field, str(exc))]) from None
    traces, _ = model_traces(inp, outcome.values)
    curves = modelled(inp, outcome.values, traces)
    series = []
    for r, (pid, tc, pos), (tt, yy), res in zip(readings, labels, curves, outcome.residuals, strict=True):
        mt, my = _thin(tt, yy)
        series.append(
            ProfileSeries(
                part=pid,
                thermocouple=tc,
                position=pos,
                time_s=[float(v) for v in r.time_s],
                reading_c=[float(v) for v in r.temp_c],
                residual_k=[None if np.isnan(v) else round(float(v), 4) for v in res],
                model_time_s=mt,
                model_c=my,
            )
        )
    return RecordFit(record=record, step=step, inp=inp, outcome=outcome, series=series)
