"""Exchange profiles in batch files: a step or a lower face names one instead of htc or medium; the
profile's values are written in; conflicts and unknown names are refused at their field."""

from __future__ import annotations

import datetime as dt
from typing import Any

import pytest

from models import SpecError, parse_batch
from models.profiles import LocalProfiles, ProfileSpec, parse_profile
from workers.convert import to_step

STEEL = {"conductivity": "40 W/m/K", "density": "7850 kg/m^3", "specific_heat": "500 J/kg/K"}


def profile(name: str = "f2", **kw: Any) -> ProfileSpec:
    doc: dict[str, Any] = {
        "name": name,
        "htc_w_m2k": 123.4,
        "emissivity": 0.6,
        "step": "heat",
        "ambient": "860 degC",
        "record": "survey",
        "record_date": "2026-11-01",
        "fitted_at": dt.datetime(2026, 11, 2, tzinfo=dt.UTC).isoformat(),
        "level": 0.95,
        "params": [{"name": "h", "value": 123.4, "low": 120.0, "high": 127.0, "unit": "W/m^2/K"}],
        "rms_k": 1.2,
        "max_k": 3.0,
        "readings": 40,
    }
    doc.update(kw)
    return parse_profile(doc)


PROFILES = {"f2": profile(), "tank": profile("tank", htc_w_m2k=None, medium="oil-agitated", severity=0.8)}


def batch(step: dict[str, Any], shape: str = "plate") -> dict[str, Any]:
    size = {"thickness": "40 mm"} if shape == "plate" else {"diameter": "40 mm"}
    return {
        "batch": "b",
        "schedule": [{"name": "heat", "duration": "1 h", "ambient": "860 degC", **step}],
        "parts": [{"id": "A", "shape": shape, **size, "material": STEEL, "initial": "20 degC"}],
    }


def test_constant_profile_sets_h_and_emissivity() -> None:
    spec = parse_batch(batch({"profile": "f2"}), profiles=PROFILES.get)
    step = spec.schedule[0]
    assert step.htc_w_m2k == pytest.approx(123.4) and step.emissivity == 0.6 and step.profile == "f2"


def test_severity_profile_scales_the_medium_curve() -> None:
    spec = parse_batch(batch({"profile": "tank"}), profiles=PROFILES.get)
    face = to_step(spec.schedule[0]).face
    plain = to_step(parse_batch(batch({"medium": "oil-agitated"})).schedule[0]).face
    assert face.htc.value == pytest.approx(tuple(0.8 * v for v in plain.htc.value))


def test_profile_on_a_lower_face() -> None:
    spec = parse_batch(batch({"htc": "50 W/m^2/K", "lower_face": {"profile": "f2"}}), profiles=PROFILES.get)
    lower = spec.schedule[0].lower_face
    assert lower is not None and lower.htc_w_m2k == pytest.approx(123.4)


def test_unknown_profile_is_named_at_its_field() -> None:
    with pytest.raises(SpecError) as info:
        parse_batch(batch({"profile": "nope"}), profiles=PROFILES.get)
    assert [p.path for p in info.value.problems] == ["schedule[0].profile"]
    assert "no exchange profile named 'nope'" in str(info.value)


def test_profile_with_its_own_exchange_is_refused() -> None:
    with pytest.raises(SpecError) as info:
        parse_batch(batch({"profile": "f2", "htc": "100 W/m^2/K"}), profiles=PROFILES.get)
    assert [p.path for p in info.value.problems] == ["schedule[0].htc"]


def test_without_a_lookup_a_profile_is_not_known() -> None:
    with pytest.raises(SpecError, match="no exchange profile named 'f2'"):
        parse_batch(batch({"profile": "f2"}))


def test_severity_needs_a_medium() -> None:
    with pytest.raises(SpecError) as info:
        parse_batch(batch({"htc": "100 W/m^2/K", "severity": 1.2}))
    assert [p.path for p in info.value.problems] == ["schedule[0].severity"]
    with pytest.raises(SpecError):
        parse_batch(batch({"medium": "oil-still", "severity": 0}))


def test_severity_on_a_medium_step_and_lower_face() -> None:
    spec = parse_batch(
        batch({"medium": "oil-still", "severity": 1.5, "lower_face": {"medium": "water", "severity": 0.5}})
    )
    st = to_step(spec.schedule[0])
    base = to_step(parse_batch(batch({"medium": "oil-still", "lower_face": {"medium": "water"}})).schedule[0])
    assert st.face.htc.value == pytest.approx(tuple(1.5 * v for v in base.face.htc.value))
    assert st.second_face is not None and base.second_face is not None
    assert st.second_face.htc.value == pytest.approx(tuple(0.5 * v for v in base.second_face.htc.value))


def test_a_profile_gives_one_exchange_and_a_safe_name() -> None:
    with pytest.raises(SpecError, match="either htc_w_m2k or medium"):
        profile(medium="oil-still")
    with pytest.raises(SpecError) as info:
        profile("bad/name")
    assert info.value.problems[0].path == "name"


def test_local_profiles_round_trip_and_replace(tmp_path: Any) -> None:
    store = LocalProfiles(tmp_path / "p.json")
    assert store.get("f2") is None
    store.save(PROFILES["f2"])
    store.save(profile("f2", htc_w_m2k=99.0))
    got = store.get("f2")
    assert got is not None and got.htc_w_m2k == 99.0 and store.names() == ["f2"]
