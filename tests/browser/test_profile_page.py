"""The exchange profile page in headless Chromium: a real fit of the demo record stored through the API,
its readings and fitted curves drawn in one chart, residuals below, the record's date and the caution.
Screenshots go to test-artifacts/."""

from __future__ import annotations

import base64
from pathlib import Path
from typing import Any

import httpx
import pytest

from models.records import load_record_file
from workers.fitting import fit_record

from .conftest import Site, artifacts, sign_in
from .test_pages import COUNT_COLOURS

pytestmark = pytest.mark.browser
DEMO = Path(__file__).resolve().parents[2] / "scheduler" / "demo" / "record.yaml"


def test_profile_page_draws_readings_fit_and_residuals(page: Any, site: Site) -> None:
    done = fit_record(load_record_file(DEMO), "heat", ["h", "lag"])
    doc = done.profile("demo-furnace-2").model_dump(mode="json")
    headers = {"Authorization": f"Bearer {site.tokens['planner']}"}
    stored = httpx.post(f"{site.url}/profiles", json=doc, headers=headers, timeout=30)
    assert stored.status_code == 201, stored.text

    sign_in(page, site, "viewer")
    page.get_by_role("link", name="Exchange profiles").click()
    page.get_by_role("link", name="demo-furnace-2").click()
    page.wait_for_function("window.soaklineProfile !== undefined")
    assert "recorded on 2026-11-20" in page.locator(".caution").inner_text()
    got = page.evaluate(
        """() => { const p = window.soaklineProfile; return {
            top: p.plot.series.map(s => s.label), bottom: p.residual.series.map(s => s.label),
            n: p.plot.data[0].length, r: p.residual.data[0].length}; }"""
    )
    assert got["top"][1:] == [
        "PL-40 TC1 (core) fitted (°C)",
        "PL-40 TC1 (core) reading (°C)",
        "PL-40 TC2 (10 mm) fitted (°C)",
        "PL-40 TC2 (10 mm) reading (°C)",
        "RB-60 TC3 (core) fitted (°C)",
        "RB-60 TC3 (core) reading (°C)",
    ]
    assert got["bottom"][1:] == [
        "PL-40 TC1 (core) residual (K)",
        "PL-40 TC2 (10 mm) residual (K)",
        "RB-60 TC3 (core) residual (K)",
    ]
    assert got["r"] == 60  # the heat's readings after time zero, every 2 min for 2 h
    for holder in ("#profile-chart", "#residual-chart"):
        shot = page.locator(holder).screenshot(
            path=str(artifacts() / f"profile{holder[1:]}.png".replace("#", ""))
        )
        stats = page.evaluate(COUNT_COLOURS, base64.b64encode(shot).decode())
        assert stats["colours"] > 30, (holder, stats)
        assert 0.002 < stats["dark"] / stats["pixels"] < 0.5, (holder, stats)
    page.screenshot(path=str(artifacts() / "profile.png"), full_page=True)
