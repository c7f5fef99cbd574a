"""`soakline run`, `suggest` and `demo` as a user meets them: exit codes, messages and the JSON."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import pytest
from typer.testing import CliRunner

from scheduler.cli import app

from .conftest import FLAGGED, PASSING

Write = Callable[..., Path]
runner = CliRunner()
SOAKLINE = Path(sys.prefix) / "bin" / "soakline"


def test_run_all_pass_exits_0_and_writes_the_contract(write: Write, tmp_path: Path) -> None:
    out = tmp_path / "r.json"
    res = runner.invoke(app, ["run", str(write(PASSING)), "--json", str(out)])
    assert res.exit_code == 0, res.output
    assert "all 1 parts pass" in res.stdout
    assert str(out) in res.stdout
    assert "never replaces load thermocouples or hardness checks" in " ".join(res.stdout.split())
    doc = json.loads(out.read_text())
    assert set(doc) >= {"batch", "parts"}
    (part,) = doc["parts"]
    assert set(part) >= {"id", "flagged", "flags", "trace"}
    assert set(part["trace"]) >= {"time_s", "core_c", "surface_c", "ambient_c"}
    assert part["flagged"] is False


def test_run_flagged_exits_1_and_says_by_how_much(write: Write, tmp_path: Path) -> None:
    out = tmp_path / "r.json"
    res = runner.invoke(app, ["run", str(write(FLAGGED)), "--json", str(out)])
    assert res.exit_code == 1, res.output
    assert "FLAG" in res.stdout and "1 of 2 parts flagged" in res.stdout
    assert "core held at or above 845 degC for" in res.stdout
    doc = json.loads(out.read_text())
    thick = doc["parts"][1]
    assert thick["flagged"] is True
    assert {"step", "at", "target", "required", "achieved", "message"} <= set(thick["flags"][0])


def test_run_writes_next_to_the_cwd_by_default(
    write: Write, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    res = runner.invoke(app, ["run", str(write(PASSING, "load7.yaml"))])
    assert res.exit_code == 0
    assert (tmp_path / "load7-result.json").exists()


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        (PASSING.replace('thickness: "20 mm"', 'thickness: "20"'), "parts[0].thickness"),
        (PASSING.replace('thickness: "20 mm"', 'thickness: "20 kg"'), "parts[0].thickness"),
        (PASSING.replace('duration: "2 h"', 'duration: "2 degC"'), "schedule[0].duration"),
        (PASSING.replace("step: quench", "step: cool"), "parts[0].targets[1].step"),
        (PASSING.replace('"860 degC", htc', '"860 degC" htc'), "YAML syntax error at line 3"),
    ],
)
def test_invalid_files_exit_2_with_field_paths_and_no_traceback(
    write: Write, text: str, expected: str
) -> None:
    res = runner.invoke(app, ["run", str(write(text))])
    assert res.exit_code == 2
    assert expected in res.stderr
    assert "Traceback" not in res.output
    assert "Nothing was computed" in res.stderr and "Cannot use" in res.stderr


def test_every_problem_gets_its_own_line(write: Write) -> None:
    text = PASSING.replace('thickness: "20 mm"', 'thickness: "-20 mm"').replace('"860 degC"', '"860"')
    res = runner.invoke(app, ["run", str(write(text))])
    assert res.exit_code == 2
    lines = [line.strip() for line in res.stderr.splitlines()]
    assert any(line.startswith("schedule[0].ambient:") for line in lines)
    assert any(line.startswith("parts[0].thickness:") for line in lines)


def test_a_missing_file_exits_2(tmp_path: Path) -> None:
    res = runner.invoke(app, ["run", str(tmp_path / "nope.yaml")])
    assert res.exit_code == 2
    assert "no such file" in res.stderr
    assert "Traceback" not in res.output


def test_bad_arguments_are_a_usage_error() -> None:
    res = runner.invoke(app, ["run"])
    assert res.exit_code == 2
    res = runner.invoke(app, ["run", "x.yaml", "--frobnicate"])
    assert res.exit_code == 2


def test_suggest_prints_and_writes_the_duration(write: Write, tmp_path: Path) -> None:
    out = tmp_path / "s.json"
    res = runner.invoke(app, ["suggest", str(write(FLAGGED)), "--step", "heat", "--json", str(out)])
    assert res.exit_code == 0, res.output
    doc = json.loads(out.read_text())
    assert set(doc) >= {"step", "duration_s", "limiting_part"}
    assert doc["step"] == "heat" and doc["limiting_part"] == "thick" and doc["duration_s"] > 7200
    assert "Shortest 'heat'" in res.stdout
    assert doc["duration_s"] % 60 == 0 and doc["method"] == "exact"
    assert "How: exact:" in res.stdout and "confirmed by a run at" in res.stdout


def test_suggest_on_a_step_without_targets_has_nothing_to_clear_and_exits_0(write: Write) -> None:
    text = PASSING.replace(
        '  - {name: quench, duration: "20 min", ambient: "60 degC", htc: "2000 W/m^2/K"}',
        '  - {name: quench, duration: "20 min", ambient: "60 degC", htc: "2000 W/m^2/K"}\n'
        '  - {name: cool, duration: "1 h", ambient: "20 degC", htc: "10 W/m^2/K"}',
    )
    res = runner.invoke(app, ["suggest", str(write(text)), "--step", "cool"])
    assert res.exit_code == 0, res.output
    assert "Nothing to clear" in res.stdout and "No duration" not in res.stdout


def test_suggest_with_an_unknown_step_exits_2(write: Write) -> None:
    res = runner.invoke(app, ["suggest", str(write(PASSING)), "--step", "soak"])
    assert res.exit_code == 2
    assert "step: no step named 'soak'" in res.stderr


def test_suggest_that_cannot_clear_exits_1(write: Write) -> None:
    text = PASSING.replace(
        "      - {step: heat, at: core",
        '      - {step: heat, at: surface, stay_below: "850 degC"}\n      - {step: heat, at: core',
    )
    res = runner.invoke(app, ["suggest", str(write(text)), "--step", "heat"])
    assert res.exit_code == 1, res.output
    assert "No duration of 'heat' clears" in res.stdout


@pytest.mark.skipif(not SOAKLINE.exists(), reason="the console script is not installed in this environment")
def test_the_installed_command_exit_codes(write: Write, tmp_path: Path) -> None:
    env = {**os.environ, "NO_COLOR": "1"}
    flagged = subprocess.run(
        [str(SOAKLINE), "run", str(write(FLAGGED)), "--json", str(tmp_path / "f.json")],
        capture_output=True,
        text=True,
        env=env,
        timeout=300,
    )
    assert flagged.returncode == 1, flagged.stderr
    bad = subprocess.run(
        [str(SOAKLINE), "run", str(write("batch: [unclosed\n", "bad.yaml"))],
        capture_output=True,
        text=True,
        env=env,
        timeout=300,
    )
    assert bad.returncode == 2
    assert "YAML syntax error at line" in bad.stderr
    assert "Traceback" not in bad.stderr + bad.stdout


@pytest.mark.slow
def test_demo_runs_and_writes_the_contract(tmp_path: Path) -> None:
    out = tmp_path / "demo.json"
    res = runner.invoke(app, ["demo", "--json", str(out)])
    assert res.exit_code == 0, res.output
    assert str(out) in res.stdout and "FLAG" in res.stdout
    doc = json.loads(out.read_text())
    assert set(doc) >= {"batch", "parts", "notice"}
    shapes = {p["shape"] for p in doc["parts"]}
    assert {"plate", "bar", "block"} <= shapes
    kinds = {c["target"] for p in doc["parts"] for c in p["checks"]}
    assert len(kinds) == 6  # every target kind appears
    flagged = [p for p in doc["parts"] if p["flagged"]]
    assert [p["id"] for p in flagged] == ["KG-202"]  # the thick shaft misses its hold
    assert flagged[0]["flags"][0]["target"] == "hold_above"
    assert all({"time_s", "core_c", "surface_c", "ambient_c"} <= set(p["trace"]) for p in doc["parts"])
