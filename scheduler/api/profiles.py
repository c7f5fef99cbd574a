"""Exchange profile endpoints: planners create a profile (the JSON `soakline fit` writes), everyone reads."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Body, Path

from scheduler.api import profile_service
from scheduler.api.deps import CurrentToken, Planner, SessionDep
from scheduler.api.schemas import ERROR_RESPONSES, ProfilePublic, ProfileSummary

router = APIRouter(prefix="/profiles", tags=["profiles"], responses=ERROR_RESPONSES)

ProfileName = Annotated[str, Path(min_length=1, max_length=200, description="The profile's name.")]


@router.post("", status_code=201, response_model=ProfilePublic)
def create_profile(
    session: SessionDep,
    who: Planner,
    doc: Annotated[
        dict[str, Any],
        Body(description="The profile, as `soakline fit --save NAME --json OUT` writes it under `profile`."),
    ],
) -> ProfilePublic:
    """Store a fitted exchange profile (planner). 409 when the name is taken: profiles never change.

    A profile holds for the furnace or tank in the condition in which it was recorded; it never
    replaces the furnace surveys and instrument checks that the pyrometry specifications require.
    """
    return profile_service.create_profile(session, doc, who)


@router.get("", response_model=list[ProfileSummary])
def list_profiles(session: SessionDep, _: CurrentToken) -> list[ProfileSummary]:
    """Every stored profile, by name: what it sets, its record and the record's date, its fit."""
    return profile_service.list_profiles(session)


@router.get("/{name}", response_model=ProfilePublic)
def get_profile(name: ProfileName, session: SessionDep, _: CurrentToken) -> ProfilePublic:
    """One profile with its record, date, fitted values, intervals, residuals and chart series."""
    return profile_service.get_profile(session, name)
