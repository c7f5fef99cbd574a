"""Thermocouple records: the format read as documented, and every bad record refused with its line and
field; `soakline fit` as a user meets it, and nothing saved from a bad record."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

from models import SpecError, load_batch_file
from models.profiles import LocalProfiles
from models.records import load_record_file, parse_record
from scheduler.cli import app
from workers.fitting import fit_record

runner = CliRunner()
STEEL = '{conductivity: "40 W/m/K", density: "7850 kg/m^3", specific_heat: "500 J/kg/K"}'


def record_text(
    rows: str,
    *,
    thermocouples: str = "{TC1: core, TC2: '5 mm'}",
    header: str = "time [min], TC1 [degC], TC2 [degC]",
) -> str:
    return f"""\
record: test load
date: "2026-11-02"
schedule:
  - {{name: heat, duration: "1 h", ambient: "860 degC", htc: "100 W/m^2/K"}}
  - {{name: quench, duration: "10 min", ambient: "60 degC", htc: "1500 W/m^2/K"}}
parts:
  - id: P1
    shape: plate
    thickness: "40 mm"
    material: {STEEL}
    initial: "20 degC"
    thermocouples: {thermocouples}
    readings: |
      {header}
{rows}
"""


GOOD_ROWS = "\n".join(f"      {m}, {20 + 13 * m:.1f}, {25 + 13 * m:.1f}" for m in range(0, 61, 5))


def write(tmp_path: Path, text: str, name: str = "rec.yaml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def problems(tmp_path: Path, text: str) -> list[str]:
    with pytest.raises(SpecError) as info:
        load_record_file(write(tmp_path, text))
    return [str(p) for p in info.value.problems]


def test_a_good_record_reads_in_si_with_its_lines(tmp_path: Path) -> None:
    rec = load_record_file(write(tmp_path, record_text(GOOD_ROWS)))
    (part,) = rec.parts
    tc1, tc2 = part.thermocouples
    assert tc1.where == "core" and tc2.where == "depth" and tc2.depth_m == pytest.approx(0.005)
    assert tc1.time_s[:2] == (0.0, 300.0)
    assert tc1.lines[0] == 2  # the header is line 1 of the table
    assert rec.date.isoformat() == "2026-11-02"


def test_degf_and_hours_in_the_header_are_converted(tmp_path: Path) -> None:
    rows = "      0, 68, 68\n      0.5, 212, 230\n      1, 1472, 1500"
    rec = load_record_file(write(tmp_path, record_text(rows, header="t [h], TC1 [degF], TC2 [degF]")))
    tc1 = rec.parts[0].thermocouples[0]
    assert tc1.time_s == (0.0, 1800.0, 3600.0)
    assert tc1.temp_c == pytest.approx((20.0, 100.0, 800.0))  # 212 degF boils water (common knowledge)


def test_time_going_backwards_names_line_and_column(tmp_path: Path) -> None:
    rows = "      0, 20, 20\n      10, 150, 160\n      5, 100, 110\n      20, 300, 310"
    found = problems(tmp_path, record_text(rows))
    assert any(
        "parts[0].readings line 4 (file line 17)" in p and "time goes backwards" in p for p in found
    ), found


def test_nan_reading_names_line_and_thermocouple(tmp_path: Path) -> None:
    rows = "      0, 20, 20\n      10, nan, 160\n      20, 300, 310"
    found = problems(tmp_path, record_text(rows))
    assert any("line 3" in p and "TC1" in p and "not a reading" in p for p in found), found


def test_missing_units_in_the_header(tmp_path: Path) -> None:
    found = problems(tmp_path, record_text(GOOD_ROWS, header="time, TC1 [degC], TC2"))
    assert any("line 1" in p and "column 1 'time' has no unit" in p for p in found), found
    assert any("column 3 'TC2' has no unit" in p for p in found), found


def test_wrong_kind_of_unit_in_the_header(tmp_path: Path) -> None:
    found = problems(tmp_path, record_text(GOOD_ROWS, header="time [degC], TC1 [min], TC2 [degC]"))
    assert any("column 1 'time': 'degC' is not a time unit" in p for p in found), found
    assert any("column 2 'TC1': 'min' is not a temperature unit" in p for p in found), found


def test_thermocouple_deeper_than_the_part(tmp_path: Path) -> None:
    found = problems(tmp_path, record_text(GOOD_ROWS, thermocouples="{TC1: core, TC2: '45 mm'}"))
    assert any(p.startswith("parts[0].thermocouples.TC2") and "deeper than the part" in p for p in found), (
        found
    )
    found = problems(tmp_path, record_text(GOOD_ROWS, thermocouples="{TC1: core, TC2: '30 mm'}"))
    assert any("past the centre" in p for p in found), found


def test_too_few_readings_per_thermocouple(tmp_path: Path) -> None:
    found = problems(tmp_path, record_text("      0, 20, 20\n      10, 150, 160"))
    assert any("only 2 readings" in p for p in found), found


def test_schedule_and_part_problems_keep_their_paths(tmp_path: Path) -> None:
    text = (
        record_text(GOOD_ROWS)
        .replace('thickness: "40 mm"', "thickness: 40")
        .replace('date: "2026-11-02"', "date: soon")
    )
    found = problems(tmp_path, text)
    assert any(p.startswith("parts[0].thickness") for p in found), found
    assert any(p.startswith("date:") for p in found), found


def test_a_column_without_a_thermocouple(tmp_path: Path) -> None:
    found = problems(tmp_path, record_text(GOOD_ROWS, thermocouples="{TC1: core}"))
    assert any("'TC2' is not among the thermocouples (TC1)" in p for p in found), found


def test_readings_from_a_csv_file_next_to_the_record(tmp_path: Path) -> None:
    (tmp_path / "load.csv").write_text("time [s], TC1 [degC]\n0, 20\n60, 40\n60, 41\n", encoding="utf-8")
    text = record_text("", thermocouples="{TC1: core}").replace(
        "readings: |\n      time [min], TC1 [degC], TC2 [degC]\n", "readings: load.csv\n"
    )
    found = problems(tmp_path, text)
    assert any("readings line 4 (file line 4)" in p and "repeats" in p for p in found), found


def test_unknown_step_and_too_few_in_the_step(tmp_path: Path) -> None:
    rec = load_record_file(write(tmp_path, record_text(GOOD_ROWS)))
    with pytest.raises(SpecError, match="no step named 'soak'") as info:
        fit_record(rec, "soak")
    assert info.value.problems[0].path == "--step"
    with pytest.raises(SpecError, match="only 0 readings fall within the step") as info:
        fit_record(rec, "quench")
    assert info.value.problems[0].path == "readings"


def test_fit_cli_saves_a_profile_that_a_batch_uses(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    store = tmp_path / "profiles.json"
    monkeypatch.setenv("SOAKLINE_PROFILES_FILE", str(store))
    out = tmp_path / "fit.json"
    res = runner.invoke(
        app,
        [
            "fit",
            str(write(tmp_path, record_text(GOOD_ROWS))),
            "--step",
            "heat",
            "--json",
            str(out),
            "--save",
            "f2-fan-high",
        ],
    )
    assert res.exit_code == 0, res.output
    report = json.loads(out.read_text())
    assert report["params"][0]["name"] == "h" and report["profile"]["name"] == "f2-fan-high"
    assert "never replaces the furnace surveys" in " ".join(res.stdout.split())
    h = report["params"][0]["value"]
    batch = tmp_path / "b.yaml"
    batch.write_text(
        f"""batch: uses a profile
schedule:
  - {{name: heat, duration: "1 h", ambient: "860 degC", profile: f2-fan-high}}
parts:
  - {{id: A, shape: plate, thickness: "40 mm", material: {STEEL}, initial: "20 degC"}}
""",
        encoding="utf-8",
    )
    spec = load_batch_file(batch, profiles=LocalProfiles().get)
    assert spec.schedule[0].htc_w_m2k == pytest.approx(h, rel=1e-5)
    assert spec.schedule[0].profile == "f2-fan-high"
    res = runner.invoke(app, ["run", str(batch), "--json", str(tmp_path / "r.json")])
    assert res.exit_code == 0, res.output


@pytest.mark.parametrize(
    ("rows", "step", "expect"),
    [
        (
            "      0, 20, 20\n      10, 150, 160\n      5, 100, 110\n      20, 300, 310",
            "heat",
            "time goes backwards",
        ),
        (GOOD_ROWS, "soak", "no step named 'soak'"),
        ("      0, 20, 20\n      10, 1e999, 160\n      20, 300, 310", "heat", "not a reading"),
    ],
)
def test_fit_cli_bad_record_exits_2_and_saves_nothing(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, rows: str, step: str, expect: str
) -> None:
    store = tmp_path / "profiles.json"
    monkeypatch.setenv("SOAKLINE_PROFILES_FILE", str(store))
    res = runner.invoke(app, ["fit", str(write(tmp_path, record_text(rows))), "--step", step, "--save", "x"])
    assert res.exit_code == 2
    assert expect in res.stderr
    assert "Traceback" not in res.output
    assert not store.exists()


def test_parse_record_refuses_targets_and_unknown_fields() -> None:
    with pytest.raises(SpecError) as info:
        parse_record({"record": "r", "date": "2026-01-01", "schedule": [], "parts": [], "extra": 1})
    paths = [p.path for p in info.value.problems]
    assert "extra" in paths and "schedule" in paths
