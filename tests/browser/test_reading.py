"""The pages read right in Chromium: flags in degF, the underside on the chart, a rerun from a suggestion
printed in parts ("1 h 52 min")."""

from __future__ import annotations

import re
from typing import Any

import pytest

from .conftest import Site, artifacts, sign_in

pytestmark = pytest.mark.browser


def _units(page: Any, temp: str) -> None:
    page.get_by_label("Temperature unit").select_option(temp)
    page.get_by_role("button", name="Apply units").click()


def test_flags_follow_the_degf_setting(page: Any, site: Site) -> None:
    sign_in(page, site, "viewer")
    page.goto(f"{site.url}/ui/batches/{site.batch_id}/parts/THICK-60")
    _units(page, "F")
    page.wait_for_function("window.soaklineChart && window.soaklineChart.payload.temp_unit === '°F'")
    table = page.locator("table.flags").inner_text()
    # 845 degC = 1553 degF (by definition of the scales)
    assert ">= 1553 degF for 10 min" in table and "never reached 1553 degF" in table, table
    assert "degC" not in table
    page.screenshot(path=str(artifacts() / "flags-degF.png"), full_page=True)
    page.goto(f"{site.url}/ui/batches/{site.batch_id}")
    assert "degC" not in page.locator("table.parts").inner_text()
    _units(page, "C")
    page.goto(f"{site.url}/ui/batches/{site.batch_id}/parts/THICK-60")
    assert ">= 845 degC for 10 min" in page.locator("table.flags").inner_text()


def test_the_underside_of_a_plate_on_a_hearth_is_charted(page: Any, site: Site) -> None:
    sign_in(page, site, "viewer")
    page.goto(f"{site.url}/ui/batches/{site.hearth_id}/parts/WP-40")
    page.wait_for_function("window.soaklineChart !== undefined")
    chart = page.evaluate(
        """() => { const c = window.soaklineChart; return {
            series: c.plot.series.map(s => s.label), thresholds: c.payload.thresholds,
            underside: c.plot.data[3], core: c.plot.data[1], spans: c.payload.spans}; }"""
    )
    assert chart["series"][1:] == ["core (°C)", "surface (°C)", "underside (°C)", "ambient (°C)"]
    hold = next(t for t in chart["thresholds"] if t["at"] == "underside")
    assert hold["flagged"] and hold["value"] == pytest.approx(845.0)
    assert chart["spans"], "the missed hold is shaded"
    # heated from above, the underside lags the core through heating (minutes 5 to 40)
    assert all(u < c for u, c in zip(chart["underside"][15:120], chart["core"][15:120], strict=True))
    assert "underside" in page.locator("ul.checks").inner_text()
    page.locator("#chart").screenshot(path=str(artifacts() / "hearth-chart.png"))
    csv = page.request.get(f"{site.url}/ui/batches/{site.hearth_id}/parts/WP-40/trace.csv").text()
    assert csv.splitlines()[0] == "time_s,time_min,core_degC,surface_degC,underside_degC,ambient_degC"


def test_a_rerun_from_a_suggestion_printed_in_parts(page: Any, site: Site) -> None:
    sign_in(page, site, "planner")
    page.goto(f"{site.url}/ui/batches/{site.hearth_id}")
    page.get_by_role("link", name="Suggest a duration for “soak”").click()
    suggested = page.locator(".big").inner_text()
    assert re.fullmatch(r"\d+ h \d\d min", suggested), suggested  # over 100 min: hours and minutes
    assert "exact" in page.locator("main").inner_text()
    page.screenshot(path=str(artifacts() / "suggest-hearth.png"), full_page=True)
    page.get_by_role("link", name="Rerun with this duration").click()
    assert page.get_by_label("soak duration").input_value() == suggested
    page.get_by_role("button", name="Start rerun").click()
    page.wait_for_url(re.compile(rf".*/ui/batches/{site.hearth_id}/compare/\d+$"))
    row = page.locator("tr", has_text="WP-40")
    row.locator("td.change", has_text="cleared").wait_for(timeout=60_000)
    assert f"soak {suggested}" in page.locator(".meta").inner_text()
