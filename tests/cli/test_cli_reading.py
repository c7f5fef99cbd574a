"""What a person reads from the CLI: tables at 80 columns, the file's own units, exit codes in --help."""

from __future__ import annotations

import json
import re
from collections.abc import Callable
from pathlib import Path

import pytest
import typer
from rich.console import Console
from typer.testing import CliRunner

from models import parse_batch
from scheduler.cli import _result_table, app
from workers.jobs import run_batch

from .conftest import FLAGGED

Write = Callable[..., Path]
runner = CliRunner()

# The same load written by a shop that works in degF (845 degC = 1553 degF, 860 degC = 1580 degF).
FLAGGED_F = (
    FLAGGED.replace('"860 degC"', '"1580 degF"')
    .replace('"845 degC"', '"1553 degF"')
    .replace('"60 degC"', '"140 degF"')
    .replace('"200 degC"', '"392 degF"')
    .replace('"20 degC"', '"68 degF"')
)


def test_the_result_table_reads_at_80_columns(write: Write) -> None:
    import yaml

    result = run_batch(parse_batch(yaml.safe_load(FLAGGED)))
    console = Console(width=80, record=True, color_system=None)
    console.print(_result_table(result, "degC"))
    lines = console.export_text().splitlines()
    assert max(len(line) for line in lines) <= 80
    text = "\n".join(lines)
    assert "FLAG -99 s" in text and "pass +73.9 min" in text  # verdict and margin stay together
    assert "Predict…" not in text and "…" not in text  # nothing cut off
    assert "bar dia 200 mm" in text  # sizes unbroken


def test_the_table_follows_the_files_units_and_the_option(write: Write, tmp_path: Path) -> None:
    path = write(FLAGGED_F, "fahrenheit.yaml")
    out = tmp_path / "f.json"
    res = runner.invoke(app, ["run", str(path), "--json", str(out)])
    assert res.exit_code == 1, res.output
    assert ">= 1553 degF for 30 min" in res.stdout and "degC" not in res.stdout
    doc = json.loads(out.read_text())
    assert doc["parts"][1]["flags"][0]["required"] == ">= 845 degC for 30 min"  # the JSON keeps degC
    chosen = runner.invoke(app, ["run", str(path), "--json", str(out), "--units", "degC"])
    assert ">= 845 degC for 30 min" in chosen.stdout and "degF" not in chosen.stdout
    plain = runner.invoke(app, ["run", str(write(FLAGGED)), "--json", str(out), "--units", "degF"])
    assert ">= 1553 degF for 30 min" in plain.stdout


def test_run_says_where_it_wrote_the_json_when_not_told(
    write: Write, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    res = runner.invoke(app, ["run", str(write(FLAGGED, "load9.yaml"))])
    assert "Result JSON written to load9-result.json (choose with --json)" in " ".join(res.stdout.split())


def test_warnings_are_printed_and_the_batch_still_runs(write: Write, tmp_path: Path) -> None:
    text = FLAGGED.replace(
        '      - {step: quench, at: core, fall_below: "200 degC", within: "8 min"}',
        '      - {step: quench, at: core, fall_below: "200 degC", within: "8 min"}\n'
        '      - {step: heat, at: surface, stay_below: "1600 degC"}',
    )
    res = runner.invoke(app, ["run", str(write(text)), "--json", str(tmp_path / "w.json")])
    assert res.exit_code == 1
    assert "Warning parts[0].targets[2].stay_below" in " ".join(res.stdout.split())


def _commands(group: typer.Typer, prefix: tuple[str, ...] = ()) -> list[tuple[str, ...]]:
    found = [
        (*prefix, c.name or (c.callback.__name__ if c.callback else "")) for c in group.registered_commands
    ]
    for sub in group.registered_groups:
        assert sub.typer_instance is not None
        found += _commands(sub.typer_instance, (*prefix, sub.name or ""))
    return found


@pytest.mark.parametrize("command", _commands(app), ids=" ".join)
def test_every_command_documents_its_exit_status(command: tuple[str, ...]) -> None:
    res = runner.invoke(app, [*command, "--help"], env={"COLUMNS": "100"})
    assert res.exit_code == 0, res.output
    text = " ".join(res.stdout.split())
    assert "Exit status: 0" in text, text
    assert not re.search(r"[A-Za-z)] \.(?:\s|$)", text), text  # no option help lost to markup
    if "--api" in text:
        assert "SOAKLINE_API_URL" in text


def test_serve_names_both_the_docs_and_the_openapi_schema(monkeypatch: pytest.MonkeyPatch) -> None:
    import uvicorn

    import scheduler.api
    import scheduler.service_cli as service_cli

    started: list[object] = []
    monkeypatch.setattr(service_cli, "_prepare_database", lambda settings: None)
    monkeypatch.setattr(scheduler.api, "create_app", lambda settings: "app")
    monkeypatch.setattr(uvicorn, "run", lambda app, **kwargs: started.append(app))
    monkeypatch.setenv("SOAKLINE_DATABASE_URL", "sqlite:///unused.db")
    monkeypatch.delenv("SOAKLINE_BROKER_URL", raising=False)
    res = runner.invoke(app, ["serve", "--port", "8123"])
    assert res.exit_code == 0, res.output
    said = " ".join(res.stderr.split())
    assert "http://127.0.0.1:8123" in said and "/docs" in said and "/openapi.json" in said
    assert started == ["app"]
