"""Service commands of the ``soakline`` CLI: serve, worker, token create, and the HTTP client verbs.

:func:`register` adds them to the main Typer app. Client verbs (``submit``, ``status``, ``flags``,
``rerun``, ``compare``, ``review``) talk to the API at ``--api`` (default ``SOAKLINE_API_URL``) with
the token in ``SOAKLINE_TOKEN``. Exit status: 0 done, 1 some part flagged (``submit --wait``,
``rerun --wait``), 2 invalid input (every problem printed with its field, a rerun's at its ``--set``), 3
the API or database could not be reached or refused. Each command's ``--help`` says its own.
"""

from __future__ import annotations

import json
import sys
import time
from collections.abc import Callable
from datetime import UTC, datetime, timedelta
from enum import StrEnum
from pathlib import Path
from typing import Annotated, Any, NoReturn

import httpx
import typer
import yaml
from rich.console import Console
from rich.markup import escape
from rich.table import Table

from models import SpecError, parse_time
from models.profiles import CAUTION, LocalProfiles
from models.results import FlagBody
from models.settings import Settings, SettingsError, load_settings
from models.store import DatabaseUnavailable, migrate, session_factory, session_scope, wait_for_database
from models.tables import Decision, Role
from scheduler.api.auth import create_token, list_tokens, revoke_token
from workers.targets import facts_texts
from workers.wording import TempUnit

__all__ = ["register"]

out = Console()
err = Console(stderr=True)

ApiOpt = Annotated[
    str | None, typer.Option("--api", help="API base URL (default: the SOAKLINE_API_URL setting).")
]
JsonOpt = Annotated[bool, typer.Option("--json", help="Print the API's JSON instead of a table.")]
SAFETY = (
    "Predictions are planning estimates: site procedures, heat-treatment and pyrometry specifications "
    "and qualified metallurgists decide; load thermocouples and hardness checks are not replaced."
)


def _fail(message: str, code: int) -> NoReturn:
    err.print(f"[red]error:[/red] {escape(message)}", highlight=False)
    raise typer.Exit(code)


def _settings() -> Settings:
    try:
        return load_settings()
    except SettingsError as exc:
        _fail(str(exc), 2)


def _prepare_database(settings: Settings) -> None:
    try:
        wait_for_database(settings, log=lambda m: err.print(m, highlight=False))
        migrate(settings)
    except DatabaseUnavailable as exc:
        _fail(str(exc), 3)


def _check_broker(settings: Settings) -> None:
    """With a broker configured, its transport must load here and now (a missing package is named)."""
    if settings.broker_url is None:
        return
    from workers.celery_app import BrokerSetupError, check_transport

    try:
        check_transport(settings)
    except BrokerSetupError as exc:
        _fail(str(exc), 2)


# -- processes -----------------------------------------------------------------------------------------


def serve(
    host: Annotated[str, typer.Option(help="Address to listen on.")] = "127.0.0.1",
    port: Annotated[int, typer.Option(help="TCP port.", min=1, max=65535)] = 8000,
) -> None:
    """Run the HTTP API and the review pages. Without SOAKLINE_BROKER_URL it also runs the jobs itself.

    Exit status: 0 stopped; 2 a setting is invalid; 3 the database cannot be reached.
    """
    # Imported here, as is Celery below: `soakline run` and the client verbs never load the servers.
    import uvicorn

    from scheduler.api import create_app

    settings = _settings()
    _check_broker(settings)
    _prepare_database(settings)
    mode = (
        f"Celery workers via {settings.broker_url}" if settings.broker_url else "in-process jobs (no broker)"
    )
    err.print(
        f"soakline API on http://{host}:{port} ({mode}); API docs at /docs, OpenAPI schema at /openapi.json, "
        "review pages at /ui",
        highlight=False,
    )
    # The app reads a proxy's forwarded headers itself, from SOAKLINE_TRUSTED_PROXIES only.
    uvicorn.run(create_app(settings), host=host, port=port, log_level="info", proxy_headers=False)


def worker(
    concurrency: Annotated[int, typer.Option("--concurrency", "-c", min=1, help="Worker processes.")] = 2,
    loglevel: Annotated[str, typer.Option(help="Celery log level.")] = "info",
) -> None:
    """Run a Celery worker (same as `celery -A workers worker`); needs SOAKLINE_BROKER_URL.

    Exit status: 0 stopped; 2 a setting is invalid or SOAKLINE_BROKER_URL is not set; 3 the database
    cannot be reached.
    """
    settings = _settings()
    if settings.broker_url is None:
        _fail("SOAKLINE_BROKER_URL is not set; a worker needs a broker such as redis://127.0.0.1:6379/0", 2)
    _check_broker(settings)
    _prepare_database(settings)
    from scheduler.supervise import supervise

    # The Celery worker runs as a child that is started again if it dies on its own (scheduler.supervise).
    celery = [sys.executable, "-m", "celery", "-A", "workers", "worker"]
    args = [f"--concurrency={concurrency}", f"--loglevel={loglevel}", "-Q", settings.queue]
    raise typer.Exit(supervise([*celery, *args], say=lambda m: err.print(m, highlight=False)))


def _expiry(text: str | None) -> datetime | None:
    """``--expires``: a date or time (2027-03-31, 2027-03-31T18:00, UTC) or a duration from now (90 d)."""
    if text is None:
        return None
    try:
        when = datetime.fromisoformat(text)
        return when if when.tzinfo is not None else when.replace(tzinfo=UTC)
    except ValueError:
        pass
    try:
        return datetime.now(UTC) + timedelta(seconds=parse_time(text))
    except ValueError:
        _fail(f"--expires: expected a date such as 2027-03-31 or a duration such as '90 d', got {text!r}", 2)


def token_create(
    name: Annotated[str, typer.Argument(help="Who or what the token is for.")],
    role: Annotated[Role, typer.Option(help="planner: submit/rerun; reviewer: dispositions; viewer: read.")],
    expires: Annotated[
        str | None,
        typer.Option(help="When it stops working: a date (2027-03-31, UTC) or a duration ('90 d')."),
    ] = None,
) -> None:
    """Create an API token; it is printed once, as the last word, and only its hash is stored.

    Exit status: 0 created; 2 a setting or the name is invalid; 3 the database cannot be reached.
    """
    settings = _settings()
    expires_at = _expiry(expires)
    _prepare_database(settings)
    try:
        with session_scope(session_factory(settings)) as session:
            token = create_token(session, name, role, expires_at)
    except ValueError as exc:
        _fail(str(exc), 2)
    out.print(
        f"{role.value} token for {name} (shown once, keep it safe): {token}", highlight=False, soft_wrap=True
    )


def _when(at: datetime | None) -> str:
    return "-" if at is None else at.astimezone(UTC).strftime("%Y-%m-%d %H:%M UTC")


def token_list() -> None:
    """List the tokens: name, role, created, last used, expiry (never the tokens themselves).

    Exit status: 0 listed; 2 a setting is invalid; 3 the database cannot be reached.
    """
    settings = _settings()
    _prepare_database(settings)
    with session_factory(settings)() as session:
        tokens = list_tokens(session)
    table = Table(title=f"{len(tokens)} token(s)")
    for col in ("name", "role", "created", "last used", "expires"):
        table.add_column(col)
    now = datetime.now(UTC)
    for t in tokens:
        expires = _when(t.expires_at) + (
            " (expired)" if t.expires_at is not None and t.expires_at <= now else ""
        )
        table.add_row(t.name, t.role.value, _when(t.created_at), _when(t.last_used_at), expires)
    out.print(table)


def token_revoke(name: Annotated[str, typer.Argument(help="Name of the token to revoke.")]) -> None:
    """Revoke a token: it stops working at once (page sessions too), and the name can be reused.

    Exit status: 0 revoked; 2 no token has that name, or a setting is invalid; 3 the database cannot
    be reached.
    """
    settings = _settings()
    _prepare_database(settings)
    with session_scope(session_factory(settings)) as session:
        found = revoke_token(session, name)
    if not found:
        _fail(f"no token named {name!r} (see soakline token list)", 2)
    out.print(f"token {name} revoked", highlight=False)


# -- HTTP client ---------------------------------------------------------------------------------------


def _client(api: str | None) -> httpx.Client:
    settings = _settings()
    if settings.token is None:
        _fail("set SOAKLINE_TOKEN to an API token (`soakline token create NAME --role ...`)", 2)
    base = (api or settings.api_url).rstrip("/")
    headers = {"Authorization": f"Bearer {settings.token.get_secret_value()}"}
    return httpx.Client(base_url=base, headers=headers, timeout=60.0)


def _call(
    client: httpx.Client, method: str, url: str, *, names: Callable[[str], str] | None = None, **kwargs: Any
) -> Any:
    """The API's JSON answer; exits 2 on invalid input (each problem at its path, or at the option
    ``names`` gives it) and 3 when the API cannot be reached or refuses."""
    try:
        response = client.request(method, url, **kwargs)
    except httpx.HTTPError as exc:
        _fail(f"cannot reach the API at {client.base_url} ({exc}); is `soakline serve` running?", 3)
    if response.status_code == 422:
        body = response.json()
        err.print(f"[red]invalid:[/red] {body.get('detail', '')}", highlight=False)
        for problem in body.get("problems", []):
            path = str(problem.get("path") or "")
            shown = names(path) if names is not None else (path or "(file)")
            err.print(f"  {shown}: {problem.get('message')}", highlight=False, markup=False)
        raise typer.Exit(2)
    if response.status_code >= 400:
        try:
            detail = response.json().get("detail", response.text)
        except ValueError:
            detail = response.text
        _fail(f"{response.status_code}: {detail}", 3)
    return response.json()


def _read_batch_file(path: Path) -> Any:
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        _fail(f"cannot read {path}: {exc.strerror}", 2)
    try:
        return json.loads(text) if path.suffix.lower() == ".json" else yaml.safe_load(text)
    except (ValueError, yaml.YAMLError) as exc:
        _fail(f"{path} is not valid {'JSON' if path.suffix.lower() == '.json' else 'YAML'}: {exc}", 2)


def _flag_text(flag: dict[str, Any]) -> str:
    return str(flag.get("message") or f"{flag.get('step')}/{flag.get('at')} {flag.get('target')}")


def _print_batch(body: dict[str, Any]) -> None:
    table = Table(title=f"batch {body['id']}: {body['batch']} [{body['status']}]")
    for col in ("part", "status", "flagged", "flags"):
        table.add_column(col)
    for part in body["parts"]:
        flagged = "-" if part["flagged"] is None else ("yes" if part["flagged"] else "no")
        flags = "; ".join(f"#{f.get('flag_id')} {_flag_text(f)}" for f in part["flags"]) or (
            part.get("error") or ""
        )
        table.add_row(part["id"], part["status"], flagged, flags)
    out.print(table)
    out.print(f"{body['done_count']}/{body['part_count']} parts computed, {body['flagged_count']} flagged")
    out.print(SAFETY, style="dim")


def _wait(client: httpx.Client, batch_id: int, timeout_s: float) -> dict[str, Any]:
    end = time.monotonic() + timeout_s
    while True:
        body: dict[str, Any] = _call(client, "GET", f"/batches/{batch_id}")
        if body["status"] in ("done", "failed"):
            return body
        if time.monotonic() > end:
            _fail(f"batch {batch_id} still {body['status']} after {timeout_s:g} s", 3)
        time.sleep(0.5)


def submit(
    file: Annotated[Path, typer.Argument(help="Batch file (YAML or JSON).")],
    api: ApiOpt = None,
    wait: Annotated[bool, typer.Option(help="Wait for the batch to finish and show it.")] = False,
    timeout: Annotated[float, typer.Option(help="Seconds to wait with --wait.")] = 3600.0,
) -> None:
    """Submit a batch file to the API (planner token).

    Exit status: 0 submitted (with --wait: computed, no part flagged); 1 with --wait, some part is
    flagged; 2 the file is invalid or no token is set; 3 the API cannot be reached, refuses, or --wait
    times out.
    """
    doc = _read_batch_file(file)
    with _client(api) as client:
        created = _call(client, "POST", "/batches", json=doc)
        out.print(f"batch {created['id']} {created['status']}", highlight=False)
        if wait:
            body = _wait(client, created["id"], timeout)
            _print_batch(body)
            if body["flagged_count"]:
                raise typer.Exit(1)


def status(
    batch_id: Annotated[int, typer.Argument(help="Batch id.")],
    api: ApiOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Show a batch: its status and each part's flags.

    Exit status: 0 shown; 2 no token is set; 3 the API cannot be reached or refuses (an unknown batch).
    """
    with _client(api) as client:
        body = _call(client, "GET", f"/batches/{batch_id}")
    if as_json:
        out.print_json(data=body)
    else:
        _print_batch(body)


class UnitChoice(StrEnum):
    DEG_C = "degC"
    DEG_F = "degF"


UnitsOpt = Annotated[
    UnitChoice, typer.Option("--units", help="Temperatures in the texts: degC or degF.", case_sensitive=False)
]


def _flag_cells(f: dict[str, Any], unit: TempUnit) -> tuple[str, str, str, str]:
    body = FlagBody(
        step=f["step"],
        at=f["at"],
        target=f["target"],
        required=str(f.get("required") or ""),
        achieved=str(f.get("achieved") or ""),
        margin=str(f.get("margin") or ""),
        margin_value=float(f.get("margin_value") or 0.0),
        margin_unit=str(f.get("margin_unit") or ""),
        message=str(f.get("message") or ""),
    )
    if f.get("facts"):
        body["facts"] = f["facts"]
    texts = facts_texts(body, unit)
    return (
        f"#{f['id']}\n{f['status']}",
        f"batch {f['batch']}\n{f['part']}",
        f"{f['step']}, {f['at']}\n{f['target'].replace('_', ' ')}\nmargin {texts.margin}",
        texts.message,
    )


def flags(
    api: ApiOpt = None,
    batch: Annotated[int | None, typer.Option(help="Only this batch.")] = None,
    state: Annotated[str, typer.Option("--status", help="open, dispositioned or all.")] = "open",
    as_json: JsonOpt = False,
    units: UnitsOpt = UnitChoice.DEG_C,
) -> None:
    """List flags across batches (open ones by default): one row per flag, readable at 80 columns.

    Exit status: 0 listed; 2 invalid input or no token is set; 3 the API cannot be reached or refuses.
    """
    params: dict[str, Any] = {"status": state, "limit": 1000}
    if batch is not None:
        params["batch"] = batch
    with _client(api) as client:
        body = _call(client, "GET", "/flags", params=params)
    if as_json:
        out.print_json(data=body)
        return
    table = Table(title=f"{body['total']} {state} flag(s)", title_justify="left", show_lines=True)
    table.add_column("Flag", no_wrap=True)
    table.add_column("Where", no_wrap=True)
    table.add_column("Target")
    table.add_column("Finding", ratio=1)
    unit: TempUnit = "degF" if units is UnitChoice.DEG_F else "degC"
    for f in body["items"]:
        table.add_row(*_flag_cells(f, unit))
    out.print(table)


def _durations(pairs: list[str]) -> dict[str, str]:
    durations: dict[str, str] = {}
    for pair in pairs:
        step, sep, value = pair.partition("=")
        if not sep or not step.strip() or not value.strip():
            _fail(f'--set expects STEP=DURATION (like soak="4 h"), got {pair!r}', 2)
        durations[step.strip()] = value.strip()
    return durations


def _set_option(durations: dict[str, str]) -> Callable[[str], str]:
    """An API problem path (``durations.soak``) as the option the user typed (``--set soak='2 h 30'``)."""

    def name(path: str) -> str:
        step = path.removeprefix("durations").removeprefix(".")
        return f"--set {step}={durations[step]!r}" if step in durations else "--set"

    return name


def rerun(
    batch_id: Annotated[int, typer.Argument(help="Batch to rerun.")],
    set_: Annotated[
        list[str],
        typer.Option("--set", help="STEP=DURATION, e.g. --set soak='2 h 30 min'; repeatable."),
    ],
    api: ApiOpt = None,
    wait: Annotated[bool, typer.Option(help="Wait for the rerun and compare it with the original.")] = False,
    timeout: Annotated[float, typer.Option(help="Seconds to wait with --wait.")] = 3600.0,
) -> None:
    """Rerun a batch with new step durations (planner token); prints the new batch id.

    Exit status: 0 started (with --wait: computed, no part flagged); 1 with --wait, some part of the
    rerun is flagged; 2 a --set value is invalid (named) or no token is set; 3 the API cannot be
    reached, refuses, or --wait times out.
    """
    durations = _durations(set_)
    with _client(api) as client:
        created = _call(
            client,
            "POST",
            f"/batches/{batch_id}/rerun",
            json={"durations": durations},
            names=_set_option(durations),
        )
        out.print(f"batch {created['id']} {created['status']} (rerun of {batch_id})", highlight=False)
        if wait:
            body = _wait(client, created["id"], timeout)
            _print_compare(_call(client, "GET", f"/batches/{batch_id}/compare/{created['id']}"))
            if body["flagged_count"]:
                raise typer.Exit(1)


def _print_compare(body: dict[str, Any]) -> None:
    table = Table(title=f"batch {body['before']} -> batch {body['after']}")
    for col in ("part", "change", "before", "after"):
        table.add_column(col)
    for part in body["parts"]:
        before = "; ".join(_flag_text(f) for f in part["before"]["flags"]) or "-"
        after = "; ".join(_flag_text(f) for f in part["after"]["flags"]) or "-"
        table.add_row(part["id"], part["change"], before, after)
    out.print(table)


def compare(
    batch_id: Annotated[int, typer.Argument(help="Original batch.")],
    other_id: Annotated[int, typer.Argument(help="Batch to compare with (e.g. its rerun).")],
    api: ApiOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Per part, flags before and after.

    Exit status: 0 shown; 2 no token is set; 3 the API cannot be reached or refuses (an unknown batch).
    """
    with _client(api) as client:
        body = _call(client, "GET", f"/batches/{batch_id}/compare/{other_id}")
    if as_json:
        out.print_json(data=body)
    else:
        _print_compare(body)


def review(
    flag_id: Annotated[int, typer.Argument(help="Flag id (see `soakline flags`).")],
    decision: Annotated[Decision, typer.Option(help="use-as-is, re-treat or scrap.")],
    comment: Annotated[str, typer.Option(help="Why; kept with your token's name and the time.")],
    api: ApiOpt = None,
) -> None:
    """Record a disposition for a flag (reviewer token).

    Exit status: 0 recorded; 2 invalid input or no token is set; 3 the API cannot be reached or refuses
    (an unknown flag, not a reviewer token).
    """
    with _client(api) as client:
        body = _call(
            client,
            "POST",
            f"/flags/{flag_id}/disposition",
            json={"decision": decision.value, "comment": comment},
        )
    out.print(f"flag {flag_id}: {body['decision']} by {body['by']} at {body['at']}", highlight=False)


def profile_list() -> None:
    """The exchange profiles saved on this machine by `soakline fit --save` (the local profile file).

    Exit status: 0; 2 the profile file cannot be read.
    """
    store = LocalProfiles()
    try:
        names = store.names()
        profiles = [p for n in names if (p := store.get(n)) is not None]
    except SpecError as exc:
        _fail(str(exc), 2)
    if not profiles:
        out.print(f"No profile saved in {store.path}.", highlight=False)
        return
    table = Table(title=f"Exchange profiles in {store.path}", title_justify="left")
    for col in ("name", "sets", "step", "recorded on", "RMS K"):
        table.add_column(col)
    for p in profiles:
        table.add_row(p.name, p.exchange_text, p.step, p.record_date.isoformat(), f"{p.rms_k:.2f}")
    out.print(table)
    out.print(CAUTION, style="dim", highlight=False)


def profile_send(
    name: Annotated[str, typer.Argument(help="Name of a profile saved with `soakline fit --save`.")],
    api: ApiOpt = None,
) -> None:
    """Store a locally saved exchange profile in the service (planner token), for batches sent there.

    Exit status: 0 stored; 2 no such local profile, or the API finds it invalid; 3 the API cannot be
    reached or refuses (a profile of that name exists there already: profiles never change).
    """
    try:
        profile = LocalProfiles().get(name)
    except SpecError as exc:
        _fail(str(exc), 2)
    if profile is None:
        _fail(f"no profile named {name!r} in {LocalProfiles().path}", 2)
    with _client(api) as client:
        _call(client, "POST", "/profiles", json=profile.model_dump(mode="json"))
    out.print(
        f"profile {name} stored; batch steps sent to the service can use 'profile: {name}'", highlight=False
    )


def register(app: typer.Typer) -> None:
    """Add the service commands to the main ``soakline`` app."""
    app.command("serve")(serve)
    app.command("worker")(worker)
    token_app = typer.Typer(help="API tokens.", no_args_is_help=True)
    token_app.command("create")(token_create)
    token_app.command("list")(token_list)
    token_app.command("revoke")(token_revoke)
    app.add_typer(token_app, name="token")
    profile_app = typer.Typer(help="Exchange profiles fitted by `soakline fit`.", no_args_is_help=True)
    profile_app.command("list")(profile_list)
    profile_app.command("send")(profile_send)
    app.add_typer(profile_app, name="profile")
    for fn in (submit, status, flags, rerun, compare, review):
        app.command(fn.__name__)(fn)


if __name__ == "__main__":  # pragma: no cover - convenience: python -m scheduler.service_cli
    _app = typer.Typer(no_args_is_help=True)
    register(_app)
    _app(prog_name="soakline")
    sys.exit(0)
