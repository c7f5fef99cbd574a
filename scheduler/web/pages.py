"""The review pages' routes: sign-in, batches, a batch, a part, dispositions, rerun, compare, report.

Every page reads through the service functions of the JSON API (``scheduler.api.service``: no query
of its own) and checks roles with the API's rule (``WebPlanner``, ``WebReviewer``): viewers read,
reviewers record dispositions, planners rerun. A domain error becomes the error page
(:func:`error_page`). Pages render on the server (Jinja2); the only script is the part chart, drawn by
the vendored uPlot from data embedded in the page.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any
from urllib.parse import quote, urlsplit

from fastapi import APIRouter, Depends, Form, Query, Request
from fastapi.responses import FileResponse, HTMLResponse, PlainTextResponse, RedirectResponse, Response
from fastapi.templating import Jinja2Templates

from models import BatchSpec, parse_time, target_warnings
from models.errors import SpecError
from models.profiles import CAUTION
from models.tables import Batch, BatchStatus, Decision, Role
from models.text import text_problem
from scheduler.api import profile_service, service
from scheduler.api.auth import Principal, lookup_token
from scheduler.api.deps import BatchId, FlagId, Offset, SessionDep, SettingsDep, has_role
from scheduler.api.errors import DomainError, InvalidInput, ResultNotReady
from scheduler.web import views
from scheduler.web.csrf import check_form, cookie_secure, page_token, set_nonce
from scheduler.web.session import WebPlanner, WebReviewer, WebUser, clear_session, start_session
from scheduler.web.units import UNITS_COOKIE, Units, units_from
from workers.jobs import NOTICE  # one wording of the safety notice, shared with the results

__all__ = ["router"]

ROOT = Path(__file__).resolve().parent.parent
STATIC = ROOT / "static"
templates = Jinja2Templates(directory=str(ROOT / "templates"))

templates.env.globals["notice"] = NOTICE
templates.env.globals["decisions"] = [d.value for d in Decision]

router = APIRouter(prefix="/ui", include_in_schema=False)
# Every form post carries the page's token (scheduler.web.csrf); a post without it is refused with 403.
CHECKED = [Depends(check_form)]

REPORT_CHARTS = 20  # at most this many curves in a printed report; the table lists every part
ALL = 1_000_000  # a page lists every flag of its batch or part


def _rows(session: SessionDep, batch_id: int, spec: BatchSpec, units: Units) -> list[views.PartRow]:
    """The parts table of a batch: its status per part (as the API's batch) and each part's checks."""
    return views.part_rows(
        service.part_states(session, batch_id), spec, service.part_checks(session, batch_id), units
    )


def _safe_next(target: str | None) -> str:
    """Only a path of these pages: never redirect off-site after sign-in."""
    if not target or not target.startswith("/ui/") or target.startswith("//") or urlsplit(target).netloc:
        return "/ui/batches"
    return target


def _page(
    request: Request, name: str, user: Principal | None, status_code: int = 200, **context: Any
) -> HTMLResponse:
    units = units_from(request)
    settings = request.app.state.settings
    token, new_nonce = page_token(request, settings)
    page = templates.TemplateResponse(
        request,
        name,
        {"user": user, "units": units, "here": request.url.path, "csrf": token, **context},
        status_code=status_code,
    )
    if new_nonce is not None:
        set_nonce(page, request, settings, new_nonce)
    return page


def error_page(request: Request, exc: DomainError) -> HTMLResponse:
    """A domain error raised on a page (a missing batch, a role the page needs) as the error page."""
    user = getattr(request.state, "user", None)
    return _page(request, "error.html", user, exc.status_code, message=exc.message)


# -- assets, sign-in, units ---------------------------------------------------------------------------


@router.get("/static/{path:path}")
def static(path: str) -> Response:
    """Vendored chart library and the pages' own CSS and script, served from the installed package."""
    file = (STATIC / path).resolve()
    if not file.is_file() or STATIC not in file.parents:
        return PlainTextResponse("not found", status_code=404)
    return FileResponse(file, headers={"Cache-Control": "max-age=3600"})


@router.get("", response_class=RedirectResponse)
def home() -> RedirectResponse:
    return RedirectResponse("/ui/batches", status_code=303)


@router.get("/sign-in", response_class=HTMLResponse)
def sign_in_form(request: Request, next: str | None = None) -> HTMLResponse:
    return _page(request, "sign_in.html", None, next=_safe_next(next), problem=None)


@router.post("/sign-in", response_class=HTMLResponse, dependencies=CHECKED)
def sign_in(
    request: Request,
    session: SessionDep,
    settings: SettingsDep,
    token: Annotated[str, Form()] = "",
    next: Annotated[str, Form()] = "/ui/batches",
) -> Response:
    principal = lookup_token(session, token.strip()) if token.strip() else None
    if principal is None:
        problem = "That token is not known. Paste the whole token (it starts with sl_)."
        return _page(request, "sign_in.html", None, 401, next=_safe_next(next), problem=problem)
    response = RedirectResponse(_safe_next(next), status_code=303)
    start_session(response, token.strip(), cookie_secure(request, settings))
    return response


@router.post("/sign-out", dependencies=CHECKED)
def sign_out(request: Request, settings: SettingsDep) -> RedirectResponse:
    response = RedirectResponse("/ui/sign-in", status_code=303)
    clear_session(response, cookie_secure(request, settings))
    return response


@router.post("/units", dependencies=CHECKED)
def set_units(
    request: Request,
    settings: SettingsDep,
    temp: Annotated[str, Form()] = "C",
    length: Annotated[str, Form()] = "mm",
    back: Annotated[str, Form()] = "/ui/batches",
) -> RedirectResponse:
    units = Units.parse(f"{temp}-{length}")
    response = RedirectResponse(_safe_next(back), status_code=303)
    response.set_cookie(
        UNITS_COOKIE,
        units.cookie(),
        max_age=365 * 86400,
        path="/ui",
        samesite="strict",
        secure=cookie_secure(request, settings),
    )
    return response


# -- batches ------------------------------------------------------------------------------------------


@router.get("/batches", response_class=HTMLResponse)
def batches(
    request: Request, session: SessionDep, user: WebUser, status: str | None = None, offset: Offset = 0
) -> HTMLResponse:
    chosen = BatchStatus(status) if status in {s.value for s in BatchStatus} else None
    page = service.list_batches(session, chosen, 50, max(0, offset))
    open_counts = service.open_flag_counts(session, [b.id for b in page.items])
    return _page(
        request,
        "batches.html",
        user,
        page=page,
        open_counts=open_counts,
        status=chosen.value if chosen else "",
        statuses=[s.value for s in BatchStatus],
    )


@router.get("/batches/{batch_id}", response_class=HTMLResponse)
def batch_page(request: Request, batch_id: BatchId, session: SessionDep, user: WebUser) -> HTMLResponse:
    batch, spec = service.get_batch_record(session, batch_id)
    units = units_from(request)
    return _page(
        request,
        "batch.html",
        user,
        batch=batch,
        rows=_rows(session, batch_id, spec, units),
        schedule=views.schedule_rows(spec, units),
        hold_steps=views.hold_steps(spec),
        warnings=target_warnings(spec),
        busy=batch.status in (BatchStatus.QUEUED, BatchStatus.RUNNING),
        reruns=service.rerun_ids(session, batch_id),
    )


@router.get("/batches/{batch_id}/suggest", response_class=HTMLResponse)
def suggest_page(
    request: Request,
    batch_id: BatchId,
    session: SessionDep,
    settings: SettingsDep,
    user: WebUser,
    step: Annotated[str, Query(min_length=1)],
) -> HTMLResponse:
    answer = service.suggest(session, settings, batch_id, step)
    return _page(request, "suggest.html", user, batch_id=batch_id, answer=answer)


@router.get("/batches/{batch_id}/report", response_class=HTMLResponse)
def report(request: Request, batch_id: BatchId, session: SessionDep, user: WebUser) -> HTMLResponse:
    batch, spec = service.get_batch_record(session, batch_id)
    units = units_from(request)
    flags = service.list_flags(session, batch_id, None, ALL, 0).items
    rows = _rows(session, batch_id, spec, units)
    # Curves of the first flagged parts only: they are what the report is read for, and a batch may be
    # large (their results are read in one query, the others' traces never).
    shown = [r.id for r in rows if r.flagged][:REPORT_CHARTS]
    charts = [views.chart_payload(body, units) for body in service.part_results(session, batch_id, shown)]
    return _page(
        request,
        "report.html",
        user,
        batch=batch,
        rows=rows,
        marks=[views.check_marks(r.checks, units) for r in rows],
        schedule=views.schedule_rows(spec, units),
        flags=views.flag_lines(flags, units),
        charts=charts,
    )


# -- a part -------------------------------------------------------------------------------------------


@router.get("/batches/{batch_id}/parts/{part_id}", response_class=HTMLResponse)
def part_page(
    request: Request, batch_id: BatchId, part_id: str, session: SessionDep, user: WebUser
) -> HTMLResponse:
    batch, spec = service.get_batch_record(session, batch_id)
    try:
        body = service.part_result(session, batch_id, part_id)
    except ResultNotReady as exc:
        return _page(request, "pending.html", user, 200, message=exc.message, batch_id=batch_id)
    units = units_from(request)
    return _page(
        request,
        "part.html",
        user,
        batch=batch,
        part=body,
        size=views.part_size(next(p for p in spec.parts if p.id == part_id), units),
        chart=views.chart_payload(body, units),
        flags=service.list_flags(session, batch_id, None, ALL, 0, part_id=part_id).items,
        can_review=has_role(user, Role.REVIEWER),
    )


@router.get("/batches/{batch_id}/parts/{part_id}/trace.csv")
def part_csv(
    request: Request, batch_id: BatchId, part_id: str, session: SessionDep, user: WebUser
) -> Response:
    try:
        body = service.part_result(session, batch_id, part_id)
    except DomainError as exc:
        return PlainTextResponse(exc.message, status_code=exc.status_code)
    return PlainTextResponse(
        views.trace_csv(body, units_from(request)),
        media_type="text/csv",
        headers={"Content-Disposition": _attachment(f"batch{batch_id}-{part_id}.csv")},
    )


def _attachment(name: str) -> str:
    """A download's file name in a header (Latin-1 only): an ASCII stand-in and the UTF-8 name."""
    plain = "".join(c if c.isascii() and (c.isalnum() or c in "-_.") else "_" for c in name)
    return f"attachment; filename=\"{plain}\"; filename*=UTF-8''{quote(name, safe='')}"


@router.post("/flags/{flag_id}/disposition", dependencies=CHECKED)
def disposition(
    request: Request,
    flag_id: FlagId,
    session: SessionDep,
    user: WebReviewer,
    decision: Annotated[str, Form()] = "",
    comment: Annotated[str, Form()] = "",
) -> Response:
    flag = service.get_flag(session, flag_id)
    back = f"/ui/batches/{flag.batch}/parts/{quote(flag.part, safe='')}"
    if decision not in {d.value for d in Decision} or not comment.strip():
        message = "Choose a decision and write a comment (what was decided and why)."
        return _page(request, "error.html", user, 422, message=message, back=back)
    if (problem := text_problem(comment)) is not None:
        return _page(request, "error.html", user, 422, message=f"The comment {problem}.", back=back)
    service.add_disposition(session, flag_id, Decision(decision), comment.strip()[:4000], user)
    return RedirectResponse(back + "#history", status_code=303)


# -- rerun and compare --------------------------------------------------------------------------------


def _rerun_context(batch: Batch, spec: BatchSpec, values: dict[str, str] | None = None) -> dict[str, Any]:
    steps = [{"name": s.name, "duration": (values or {}).get(s.name, s.duration)} for s in spec.schedule]
    return {"batch": batch, "steps": steps, "hold_steps": views.hold_steps(spec)}


@router.get("/batches/{batch_id}/rerun", response_class=HTMLResponse)
def rerun_form(
    request: Request,
    batch_id: BatchId,
    session: SessionDep,
    user: WebUser,
    step: str | None = None,
    duration: str | None = None,
) -> HTMLResponse:
    batch, spec = service.get_batch_record(session, batch_id)
    suggested = {step: duration} if step and duration else None
    return _page(request, "rerun.html", user, problems=[], **_rerun_context(batch, spec, suggested))


@router.post("/batches/{batch_id}/rerun", response_class=HTMLResponse, dependencies=CHECKED)
async def rerun(
    request: Request, batch_id: BatchId, session: SessionDep, settings: SettingsDep, user: WebPlanner
) -> Response:
    batch, spec = service.get_batch_record(session, batch_id)
    form = await request.form()
    values = {s.name: str(form.get(f"duration:{s.name}", s.duration)).strip() for s in spec.schedule}
    changed: dict[str, str] = {}
    for step in spec.schedule:
        try:
            if parse_time(values[step.name]) != step.duration_s:
                changed[step.name] = values[step.name]
        except (SpecError, ValueError):
            changed[step.name] = values[step.name]  # let validation name the problem
    problems: list[tuple[str, str]] = []
    if not changed:
        problems = [("durations", "Change at least one step's duration.")]
    else:
        try:
            new = service.rerun(session, settings, batch_id, changed, user, request.app.state.dispatch)
        except InvalidInput as exc:
            problems = exc.problems
        else:
            return RedirectResponse(f"/ui/batches/{batch_id}/compare/{new.id}", status_code=303)
    return _page(request, "rerun.html", user, 422, problems=problems, **_rerun_context(batch, spec, values))


@router.get("/batches/{batch_id}/compare/{other_id}", response_class=HTMLResponse)
def compare(
    request: Request,
    batch_id: BatchId,
    other_id: BatchId,
    session: SessionDep,
    user: WebUser,
    part: str | None = None,
) -> HTMLResponse:
    result = service.compare(session, batch_id, other_id)
    (before, _), (after, _) = (service.get_batch_record(session, i) for i in (batch_id, other_id))
    rows = [views.compare_row(p) for p in result.parts]
    busy = any(r["change"] == "pending" for r in rows)
    ready = [r["id"] for r in rows if r["change"] != "pending"]
    shown = (
        part
        if part in ready
        else next((r["id"] for r in rows if r["change"] not in ("pass", "pending")), None)
    )
    shown = shown or (ready[0] if ready else None)
    overlay = None
    if shown is not None and not busy:
        overlay = views.overlay_payload(
            shown,
            service.part_result(session, batch_id, shown),
            service.part_result(session, other_id, shown),
            units_from(request),
        )
    return _page(
        request,
        "compare.html",
        user,
        before=before,
        after=after,
        rows=rows,
        busy=busy,
        overlay=overlay,
        ready=ready,
    )


# -- exchange profiles --------------------------------------------------------------------------------


@router.get("/profiles", response_class=HTMLResponse)
def profiles_page(request: Request, session: SessionDep, user: WebUser) -> HTMLResponse:
    """Every stored exchange profile: what it sets, its record and the record's date."""
    return _page(
        request, "profiles.html", user, profiles=profile_service.list_profiles(session), caution=CAUTION
    )


@router.get("/profiles/{name}", response_class=HTMLResponse)
def profile_page(request: Request, name: str, session: SessionDep, user: WebUser) -> HTMLResponse:
    """One profile: fitted values with intervals, the readings and fitted curves, residuals below."""
    stored = profile_service.get_profile(session, name)
    units = units_from(request)
    return _page(
        request,
        "profile.html",
        user,
        stored=stored,
        p=stored.profile,
        chart=views.profile_chart_payload(stored.profile, units),
        caution=CAUTION,
    )
