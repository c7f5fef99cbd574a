"""The review pages in headless Chromium: sign-in, the flagged part's chart, a disposition, a rerun.

Screenshots go to test-artifacts/ (kept out of git); the chart's screenshot is decoded in the browser
and must have many distinct colours, so a blank or one-colour chart fails.
"""

from __future__ import annotations

import base64
import re
from typing import Any

import pytest

from .conftest import Site, artifacts, sign_in

pytestmark = pytest.mark.browser

COUNT_COLOURS = """async (b64) => {
  const img = new Image();
  img.src = "data:image/png;base64," + b64;
  await img.decode();
  const c = document.createElement("canvas");
  c.width = img.width; c.height = img.height;
  const ctx = c.getContext("2d");
  ctx.drawImage(img, 0, 0);
  const d = ctx.getImageData(0, 0, c.width, c.height).data;
  const seen = new Set();
  let dark = 0;
  for (let i = 0; i < d.length; i += 4) {
    seen.add((d[i] << 16) | (d[i + 1] << 8) | d[i + 2]);
    if (d[i] + d[i + 1] + d[i + 2] < 384) dark++;
  }
  return {colours: seen.size, dark: dark, pixels: d.length / 4};
}"""


def test_sign_in_sets_a_strict_http_only_cookie_and_lists_batches(page: Any, site: Site) -> None:
    page.goto(f"{site.url}/ui/batches")
    assert "/ui/sign-in" in page.url
    assert "planning estimates" in page.locator(".notice").inner_text().lower()
    page.get_by_label("API token").fill("sl_not-a-token")
    page.get_by_role("button", name="Sign in").click()
    assert "not known" in page.get_by_role("alert").inner_text()

    # Keyboard only: skip link, home link, then the token field; Enter submits.
    for expected in ("Skip to content", "soakline"):
        page.keyboard.press("Tab")
        assert page.evaluate("document.activeElement.textContent.trim()") == expected
    page.keyboard.press("Tab")
    assert page.evaluate("document.activeElement.id") == "token"
    page.keyboard.type(site.tokens["viewer"])
    page.keyboard.press("Enter")
    page.wait_for_url("**/ui/batches")
    cookie = next(c for c in page.context.cookies() if c["name"] == "soakline_session")
    assert cookie["httpOnly"] and cookie["sameSite"] == "Strict"
    assert not cookie["secure"]  # plain http: SOAKLINE_COOKIE_SECURE=auto marks it Secure on https only
    assert cookie["value"] == site.tokens["viewer"]
    row = page.locator("tr", has_text="browser test load")
    assert "done" in row.inner_text()
    assert row.locator("td").nth(3).inner_text() == "3"  # parts
    assert row.locator("td").nth(4).inner_text() == "1"  # open flags
    page.get_by_label("Status").select_option("failed")
    page.get_by_role("button", name="Filter").click()
    assert page.locator("tr", has_text="browser test load").count() == 0
    page.screenshot(path=str(artifacts() / "batches.png"), full_page=True)

    page.get_by_role("button", name="Sign out").click()
    page.wait_for_url("**/ui/sign-in")
    assert not [c for c in page.context.cookies() if c["name"] == "soakline_session"]


def test_flagged_part_chart_is_drawn_with_its_data(page: Any, site: Site) -> None:
    sign_in(page, site, "viewer")
    page.goto(f"{site.url}/ui/batches/{site.batch_id}")
    flagged = page.locator("tr.flagged")
    assert flagged.count() == 1 and "THICK-60" in flagged.inner_text()
    assert "FLAG" in flagged.inner_text() and "pass" in page.locator("tr", has_text="THIN-10").inner_text()
    page.screenshot(path=str(artifacts() / "batch.png"), full_page=True)
    flagged.get_by_role("link", name="THICK-60").click()

    page.wait_for_function("window.soaklineChart !== undefined")
    chart = page.evaluate(
        """() => { const c = window.soaklineChart; return {
            series: c.plot.series.map(s => s.label), n: c.plot.data[0].length,
            core: c.plot.data[1], tmax: c.plot.data[0][c.plot.data[0].length - 1],
            steps: c.payload.steps.length, thresholds: c.payload.thresholds, spans: c.payload.spans}; }"""
    )
    assert chart["series"][1:] == ["core (°C)", "surface (°C)", "ambient (°C)"]
    assert chart["n"] > 100 and chart["tmax"] == pytest.approx(40.0, abs=0.1)  # minutes
    assert 20 <= chart["core"][0] <= 21 and max(chart["core"]) < 860
    assert chart["steps"] == 3
    hold = next(t for t in chart["thresholds"] if "hold above" in t["label"])
    assert hold["flagged"] and hold["value"] == pytest.approx(845.0)
    assert chart["spans"] and all(s["end_min"] >= s["start_min"] for s in chart["spans"])
    assert "required" in page.locator("table.flags").inner_text().lower()

    shot = page.locator("#chart").screenshot(path=str(artifacts() / "flagged-part-chart.png"))
    stats = page.evaluate(COUNT_COLOURS, base64.b64encode(shot).decode())
    assert stats["colours"] > 50, stats  # curves, labels, shading and anti-aliasing
    assert 0.002 < stats["dark"] / stats["pixels"] < 0.5, stats
    page.screenshot(path=str(artifacts() / "flagged-part.png"), full_page=True)

    # Units stick across pages; the CSV follows them.
    page.get_by_label("Temperature unit").select_option("F")
    page.get_by_label("Length unit").select_option("in")
    page.get_by_role("button", name="Apply units").click()
    page.wait_for_function("window.soaklineChart && window.soaklineChart.payload.temp_unit === '°F'")
    assert "2.36 in" in page.locator(".meta").first.inner_text()
    csv = page.request.get(f"{site.url}/ui/batches/{site.batch_id}/parts/THICK-60/trace.csv").text()
    assert csv.splitlines()[0] == "time_s,time_min,core_degF,surface_degF,ambient_degF"
    assert float(csv.splitlines()[1].split(",")[2]) == pytest.approx(68.0, abs=0.5)  # 20 degC

    # The report carries the safety notice in its own body, not only in the page header.
    page.goto(f"{site.url}/ui/batches/{site.batch_id}/report")
    assert "load thermocouples" in page.locator(".print-notice").inner_text()
    page.wait_for_function("window.soaklineCharts && window.soaklineCharts.length === 1")
    assert page.evaluate("soaklineCharts[0].payload.part") == "THICK-60"  # curves of flagged parts
    page.screenshot(path=str(artifacts() / "report.png"), full_page=True)


def test_reviewer_records_a_disposition(page: Any, site: Site) -> None:
    sign_in(page, site, "viewer")
    page.goto(f"{site.url}/ui/batches/{site.batch_id}/parts/THICK-60")
    assert page.locator("form.disposition").count() == 0  # viewers read only
    page.get_by_role("button", name="Sign out").click()

    sign_in(page, site, "reviewer")
    page.goto(f"{site.url}/ui/batches/{site.batch_id}/parts/THICK-60")
    form = page.locator("form.disposition").first
    form.get_by_label("re-treat").check()
    form.get_by_label("Comment").fill("Soak again 30 min and check hardness at mid-section.")
    form.get_by_role("button", name="Record disposition").click()
    page.wait_for_url(re.compile(r".*/parts/THICK-60#history$"))
    history = page.locator("ul.history").inner_text()
    assert "re-treat" in history and "reviewer-tester" in history and "mid-section" in history
    assert "dispositioned" in page.locator("table.flags").inner_text()
    page.screenshot(path=str(artifacts() / "disposition.png"), full_page=True)


def test_planner_reruns_with_the_suggested_soak_and_sees_the_flag_cleared(page: Any, site: Site) -> None:
    sign_in(page, site, "planner")
    page.goto(f"{site.url}/ui/batches/{site.batch_id}")
    page.get_by_role("link", name="Suggest a duration for “soak”").click()
    assert "THICK-60" in page.locator("main").inner_text()  # the limiting part
    suggested = page.locator(".big").inner_text()
    assert suggested.endswith("min") and float(suggested.split()[0]) > 10
    page.get_by_role("link", name="Rerun with this duration").click()
    soak = page.get_by_label("soak duration")
    assert soak.input_value() == suggested  # prefilled with the suggestion
    assert page.get_by_label("heat duration").input_value() == "20 min"  # the others as they were
    soak.fill("soon")
    page.get_by_role("button", name="Start rerun").click()
    assert "soak" in page.get_by_role("alert").inner_text()  # names the bad field; nothing started
    page.get_by_label("soak duration").fill(suggested)
    page.get_by_role("button", name="Start rerun").click()
    page.wait_for_url(re.compile(rf".*/ui/batches/{site.batch_id}/compare/\d+$"))
    row = page.locator("tr", has_text="THICK-60")
    # The page reloads itself every 2 s until the rerun is computed.
    row.locator("td.change", has_text="cleared").wait_for(timeout=60_000)
    assert "soak" in row.locator("td").nth(3).inner_text()  # the cleared flag, named
    assert "pass" in page.locator("tr", has_text="THIN-10").locator("td.change").inner_text()
    assert f"soak {suggested}" in page.locator(".meta").inner_text()
    page.wait_for_function("window.soaklineOverlay !== undefined")
    overlay = page.evaluate(
        "() => ({part: soaklineOverlay.payload.part, n: soaklineOverlay.plot.series.length,"
        " rows: soaklineOverlay.plot.data[0].length})"
    )
    assert overlay["part"] == "THICK-60" and overlay["n"] == 5 and overlay["rows"] > 200, overlay
    # the legend says which line is dashed, in words and in its markers
    legend = page.locator("#overlay .u-legend").inner_text()
    assert "rerun core (°C), dashed" in legend and "original core (°C), solid" in legend
    markers = page.evaluate(
        "() => [...document.querySelectorAll('#overlay .u-legend .u-marker')].map(m => m.style.borderStyle)"
    )
    assert markers[1:] == ["solid", "solid", "dashed", "dashed"], markers
    page.screenshot(path=str(artifacts() / "compare.png"), full_page=True)

    # Tablet width: the parts table scrolls inside its box, the page itself does not.
    page.set_viewport_size({"width": 768, "height": 1024})
    page.goto(f"{site.url}/ui/batches/{site.batch_id}")
    assert page.evaluate("document.documentElement.scrollWidth") <= 768
    page.screenshot(path=str(artifacts() / "batch-tablet.png"), full_page=True)


def test_the_chart_zooms_to_a_step_and_its_labels_stay_apart(page: Any, site: Site) -> None:
    sign_in(page, site, "viewer")
    page.goto(f"{site.url}/ui/batches/{site.batch_id}/parts/THICK-60")
    page.wait_for_function("window.soaklineChart !== undefined")
    boxes = page.evaluate("soaklineChart.plot.soaklineLabels")
    assert len(boxes) >= 5  # three step names, two targets
    for i, a in enumerate(boxes):
        for b in boxes[i + 1 :]:
            apart = a["x"] + a["w"] <= b["x"] or b["x"] + b["w"] <= a["x"]
            apart = apart or a["y"] + a["h"] <= b["y"] or b["y"] + b["h"] <= a["y"]
            assert apart, (a, b)
    page.get_by_role("button", name="quench", exact=True).click()
    scale = page.evaluate("({min: soaklineChart.plot.scales.x.min, max: soaklineChart.plot.scales.x.max})")
    assert scale == {"min": pytest.approx(30.0), "max": pytest.approx(40.0)}  # minutes: the quench alone
    assert page.get_by_role("button", name="quench", exact=True).get_attribute("aria-pressed") == "true"
    page.locator("#chart").screenshot(path=str(artifacts() / "chart-quench.png"))
    page.get_by_role("button", name="whole schedule").click()
    assert page.evaluate("soaklineChart.plot.scales.x.max") == pytest.approx(40.0)


def test_at_420_px_the_targets_of_a_part_are_in_view(page: Any, site: Site) -> None:
    sign_in(page, site, "viewer")
    page.set_viewport_size({"width": 420, "height": 900})
    page.goto(f"{site.url}/ui/batches/{site.batch_id}")
    cell = page.locator("tr", has_text="THICK-60").locator("td[data-label=Targets]")
    box = cell.bounding_box()
    assert box is not None and box["x"] >= 0 and box["x"] + box["width"] <= 420, box
    assert "hold above" in cell.inner_text()
    assert page.evaluate("document.documentElement.scrollWidth") <= 420
    page.screenshot(path=str(artifacts() / "batch-420.png"), full_page=True)
