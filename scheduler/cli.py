"""The ``soakline`` command line: run a batch file on this machine, suggest a soak, run the demo.

Exit status (the contract): 0 every part passes, 1 some part is flagged (``suggest``: no duration
clears the step's targets; nothing to clear is 0), 2 the input is invalid (every problem on its own line
with its field path). Each command's ``--help`` says its own. Temperatures in the tables follow
``--units``, by default the batch file's own scale. The service commands (serve, worker, ...) are
mounted from ``scheduler.service_cli`` when installed.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from enum import StrEnum
from importlib import resources
from pathlib import Path
from typing import Annotated

import typer
from rich.console import Console
from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn
from rich.table import Table
from rich.text import Text

from models import BatchSpec, SpecError, load_batch_file
from models.profiles import CAUTION, LocalProfiles
from models.records import load_record_file
from models.results import BatchResult, CheckBody
from workers.fitting import fit_record
from workers.jobs import CHUNK_PARTS, NOTICE, run_batch
from workers.suggest import suggest
from workers.targets import facts_texts
from workers.wording import TempUnit

app = typer.Typer(
    name="soakline",
    help="Predict core and surface temperatures of steel parts through a furnace batch and check targets.",
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    add_completion=False,
)

WIDE = 132  # width when the output is not a terminal (a file, a pipe, a test): tables stay unwrapped


def _console(stderr: bool = False) -> Console:
    probe = Console(stderr=stderr)
    return Console(stderr=stderr, highlight=False, width=None if probe.is_terminal else WIDE)


out = _console()
err = _console(stderr=True)


@app.callback()
def _start() -> None:
    """Predict core and surface temperatures of steel parts through a furnace batch and check targets.

    Each command's --help gives its exit status.
    """
    global out, err  # consoles follow the streams of this invocation (a terminal, a pipe, a test runner)
    out, err = _console(), _console(stderr=True)


PROGRESS_FROM_PARTS = 50
DEMO_JSON = "soakline-demo.json"


class UnitChoice(StrEnum):
    DEG_C = "degC"
    DEG_F = "degF"


FileArg = Annotated[Path, typer.Argument(help="Batch file (YAML, or JSON when it ends in .json).")]
JsonOpt = Annotated[Path | None, typer.Option("--json", help="Where to write the result JSON.")]
UnitsOpt = Annotated[
    UnitChoice | None,
    typer.Option(
        "--units",
        help="Temperatures in the table: degC or degF (default: the scale the batch file writes in). "
        "The JSON keeps degC.",
        case_sensitive=False,
    ),
]


# -- shared pieces ------------------------------------------------------------------------------------


def _invalid(exc: SpecError, what: str) -> typer.Exit:
    err.print(f"[bold]Cannot use {what}:[/bold]")
    for problem in exc.problems:
        err.print(f"  {problem}", markup=False)
    err.print("Nothing was computed. Fix the above and run again.")
    return typer.Exit(2)


def _load(file: Path) -> BatchSpec:
    try:
        return load_batch_file(file, profiles=LocalProfiles().get)
    except SpecError as exc:
        raise _invalid(exc, str(file)) from None


def _write_json(result: Mapping[str, object], path: Path) -> None:
    try:
        path.write_text(json.dumps(result, separators=(",", ":")) + "\n", encoding="utf-8")
    except OSError as exc:
        err.print(f"cannot write {path}: {exc.strerror or exc}", markup=False)
        raise typer.Exit(2) from None


def _notice() -> None:
    out.print(Text(f"Note: {NOTICE}", style="italic"))


def _compute(batch: BatchSpec) -> BatchResult:
    if len(batch.parts) < PROGRESS_FROM_PARTS:
        with out.status(f"Computing {len(batch.parts)} parts ..."):
            return run_batch(batch)
    columns = (TextColumn("Computing parts"), BarColumn(), MofNCompleteColumn(), TimeElapsedColumn())
    with Progress(*columns, console=out, transient=True) as bar:
        task = bar.add_task("parts", total=len(batch.parts))

        def report(done: int, total: int) -> None:
            bar.update(task, completed=done, total=total)

        # chunks of about a tenth of the batch: the bar moves, and each engine call still covers many parts
        return run_batch(batch, report, chunk=min(CHUNK_PARTS, max(25, len(batch.parts) // 10)))


def _part_cell(part: Mapping[str, object]) -> Text:
    cell = Text(str(part["id"]), style="bold")
    cell.append(f"\n{part['size']}\n{part['material']}", style="dim")
    return cell


def _result_table(result: BatchResult, unit: TempUnit) -> Table:
    """One row per target; the part (id, size, steel) in the first column of its first row. Five columns
    that stay readable in an 80-column terminal."""
    table = Table(title=f"Batch: {result['batch']}", title_justify="left", show_lines=False)
    table.add_column("Part", max_width=16)
    table.add_column("Step")
    table.add_column("Target", overflow="fold")
    table.add_column("Predicted", overflow="fold")
    table.add_column("Result", overflow="fold")
    for part in result["parts"]:
        checks: list[CheckBody | None] = [*part["checks"]] or [None]
        for i, check in enumerate(checks):
            first = _part_cell(part) if i == 0 else ""
            last = i == len(checks) - 1
            if check is None:
                table.add_row(first, "-", "no targets", "", "", end_section=last)
                continue
            texts = facts_texts(check, unit)
            passed = bool(check["passed"])
            verdict = Text("pass ", style="green") if passed else Text("FLAG ", style="bold red")
            verdict.append(texts.margin, style="" if passed else "red")
            table.add_row(
                first,
                check["step"],
                f"{check['at']} {texts.required}" if check["target"] != "max_difference" else texts.required,
                texts.achieved,
                verdict,
                end_section=last,
            )
    return table


def _warnings(result: BatchResult) -> None:
    for warning in result.get("warnings", []):
        out.print("[yellow]Warning[/yellow] ", end="")
        out.print(f"{warning['path']}: {warning['message']} (computed as written)", markup=False)


def _report(result: BatchResult, json_path: Path, unit: TempUnit, chosen: bool = True) -> int:
    _warnings(result)
    out.print(_result_table(result, unit))
    flagged = [p for p in result["parts"] if p["flagged"]]
    for part in flagged:
        for flag in part["flags"]:
            out.print(f"[bold red]FLAG[/bold red] {part['id']} ({flag['step']}): ", end="")
            out.print(facts_texts(flag, unit).message, markup=False)
    total = len(result["parts"])
    summary = f"{len(flagged)} of {total} parts flagged" if flagged else f"all {total} parts pass"
    where = (
        f"Result JSON: {json_path}" if chosen else f"Result JSON written to {json_path} (choose with --json)"
    )
    out.print(f"\n{summary}. {where}", markup=False)
    _notice()
    return 1 if flagged else 0


def _unit(choice: UnitChoice | None, batch: BatchSpec) -> TempUnit:
    return batch.temperature_unit if choice is None else ("degF" if choice is UnitChoice.DEG_F else "degC")


# -- commands -----------------------------------------------------------------------------------------


@app.command()
def run(file: FileArg, json_out: JsonOpt = None, units: UnitsOpt = None) -> None:
    """Compute every part of a batch file and check its targets (no servers needed).

    The result JSON goes to --json, or to FILE-result.json in the current folder.

    Exit status: 0 every part passes; 1 some part is flagged; 2 the file is invalid (each problem
    named with its field) or the JSON cannot be written.
    """
    batch = _load(file)
    result = _compute(batch)
    path = json_out or Path(f"{file.stem}-result.json")
    _write_json(result, path)
    raise typer.Exit(_report(result, path, _unit(units, batch), chosen=json_out is not None))


@app.command("suggest")
def suggest_command(
    file: FileArg,
    step: Annotated[str, typer.Option("--step", help="Name of the schedule step to shorten or lengthen.")],
    json_out: JsonOpt = None,
) -> None:
    """Find the shortest duration of one step at which every part passes every target of that step.

    A whole minute, never short: exact from one run where the step does not ramp, else by trying
    durations; the output says which.

    Exit status: 0 a duration found, or nothing to clear (no part has a target in the step); 1 no
    duration clears the step's targets; 2 the file or --step is invalid.
    """
    batch = _load(file)
    try:
        with out.status(f"Finding the shortest '{step}' ..."):
            answer = suggest(batch, step)
    except SpecError as exc:
        raise _invalid(exc, "--step") from None
    current = batch.step(step).duration
    nothing = answer["method"] == "none"
    if nothing:
        out.print(f"Nothing to clear: no part has a target in step '{step}'; its duration is free.")
    elif answer["duration_s"] is None:
        out.print(f"No duration of '{step}' clears every target of that step.")
        out.print(answer["reason"], markup=False)
    else:
        out.print(
            f"Shortest '{step}': [bold]{answer['duration']}[/bold] ({answer['duration_s']:.0f} s; "
            f"the file has {current}). Limiting part: {answer['limiting_part'] or '-'}."
        )
    if not nothing:
        out.print(f"How: {answer['how']}; {answer['simulations']} runs of the batch.", markup=False)
    if json_out is not None:
        _write_json(answer, json_out)
        out.print(f"Result JSON: {json_out}")
    _notice()
    raise typer.Exit(0 if answer["duration_s"] is not None or nothing else 1)


@app.command("fit")
def fit_command(
    record: Annotated[
        Path, typer.Argument(help="Thermocouple record (YAML, or JSON when it ends in .json).")
    ],
    step: Annotated[str, typer.Option("--step", help="Name of the record's step whose exchange is fitted.")],
    param: Annotated[
        list[str] | None,
        typer.Option(
            "--param",
            help="What to fit, repeatable: h, emissivity, severity, lag (the thermocouples' response "
            "time). Default: severity for a step with a medium, else h.",
        ),
    ] = None,
    json_out: JsonOpt = None,
    save: Annotated[
        str | None,
        typer.Option("--save", help="Save the fit as an exchange profile of this name (local profile file)."),
    ] = None,
) -> None:
    """Fit the exchange of one step (h, emissivity, severity, thermocouple lag) to a record's readings.

    Least squares with the engine as the model; 95 % intervals from the Jacobian and the residual.
    --save keeps the result as an exchange profile that a batch step can name (profile: NAME).

    Exit status: 0 fitted (warnings, if any, are printed); 2 the record, --step, --param or --save is
    invalid, or the JSON cannot be written (nothing is saved then).
    """
    try:
        rec = load_record_file(record)
    except SpecError as exc:
        raise _invalid(exc, str(record)) from None
    try:
        with out.status(f"Fitting step '{step}' ..."):
            done = fit_record(rec, step, param)
        profile = None if save is None else done.profile(save)
    except SpecError as exc:
        raise _invalid(exc, str(record)) from None
    report = done.report()
    table = Table(title=f"Record: {rec.label} ({rec.date.isoformat()}), step '{step}'", title_justify="left")
    for column in ("Parameter", "Fitted", "95 % interval", "Unit"):
        table.add_column(column)
    for p in report["params"]:
        table.add_row(p["name"], f"{p['value']:.4g}", f"{p['low']:.4g} to {p['high']:.4g}", p["unit"])
    out.print(table)
    out.print(
        f"RMS residual {report['rms_k']:.2f} K, largest {report['max_k']:.2f} K over {report['readings']} "
        f"readings; {report['evaluations']} engine runs in {report['seconds']:.1f} s."
    )
    for warning in report["warnings"]:
        out.print(Text(f"Warning: {warning}", style="bold"))
    if json_out is not None:
        if profile is not None:
            report["profile"] = profile.model_dump(mode="json")
        _write_json(report, json_out)
        out.print(f"Result JSON: {json_out}")
    if profile is not None:
        store = LocalProfiles()
        try:
            store.save(profile)
        except (SpecError, OSError) as exc:
            err.print(f"cannot save the profile to {store.path}: {exc}", markup=False)
            raise typer.Exit(2) from None
        out.print(
            f"Saved profile '{profile.name}' in {store.path}; a step uses it as 'profile: {profile.name}'."
        )
    out.print(Text(CAUTION, style="italic"))
    _notice()
    raise typer.Exit(0)


def demo_path() -> Path:
    """The bundled demo batch file."""
    return Path(str(resources.files("scheduler").joinpath("demo", "demo.yaml")))


@app.command()
def demo(json_out: JsonOpt = None, units: UnitsOpt = None) -> None:
    """Run the bundled demo batch and show its table.

    Exit status: 0, flagged parts or not (the demo shows flags on purpose); 2 the JSON cannot be
    written.
    """
    file = demo_path()
    out.print(f"Demo batch file: {file}")
    batch = _load(file)
    result = _compute(batch)
    path = json_out or Path(DEMO_JSON)
    _write_json(result, path)
    _report(result, path, _unit(units, batch), chosen=json_out is not None)
    raise typer.Exit(0)


def main() -> None:
    """Console entry point (``soakline``)."""
    app()


try:
    from scheduler.service_cli import register
except ImportError:
    pass
else:
    register(app)
