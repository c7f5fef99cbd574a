"""The profile pages (SQLite, no servers): a real fit stored through the API, its page with the record's
date, the caution, the fitted values and the chart's data; the list; a missing profile is a 404 page."""

from __future__ import annotations

import json
import re
from pathlib import Path

from models.records import parse_record
from models.store import migrate
from scheduler.api import create_app
from scheduler.web.session import SESSION_COOKIE
from scheduler.web.units import UNITS_COOKIE, Units
from tests.service.helpers import TestClient, auth, make_settings, make_tokens
from workers.fitting import fit_record

STEEL = {"conductivity": "40 W/m/K", "density": "7850 kg/m^3", "specific_heat": "500 J/kg/K"}
ROWS = "\n".join(
    f"{m}, {860 - 840 * 0.93**m:.1f}, {860 - 830 * 0.93**m:.1f}" for m in range(0, 61, 3)
)  # a made-up heat-up (demo numbers), enough for a fit of h


def _record() -> dict[str, object]:
    return {
        "record": "furnace 4 survey",
        "date": "2026-10-15",
        "schedule": [{"name": "heat", "duration": "1 h", "ambient": "860 degC", "htc": "100 W/m^2/K"}],
        "parts": [
            {
                "id": "PL-1",
                "shape": "plate",
                "thickness": "20 mm",
                "material": STEEL,
                "initial": "20 degC",
                "thermocouples": {"TC1": "core", "TC2": "surface"},
                "readings": "time [min], TC1 [degC], TC2 [degC]\n" + ROWS,
            }
        ],
    }


def test_profile_page_shows_fit_chart_date_and_caution(tmp_path: Path) -> None:
    settings = make_settings(f"sqlite:///{tmp_path / 'store.db'}")
    migrate(settings)
    tokens = make_tokens(settings)
    done = fit_record(parse_record(_record()), "heat", ["h"])
    doc = done.profile("furnace-4").model_dump(mode="json")
    with TestClient(create_app(settings, background=False)) as api:
        assert api.post("/profiles", json=doc, headers=auth(tokens["planner"])).status_code == 201
        api.cookies.set(SESSION_COOKIE, tokens["viewer"])
        page = api.get("/ui/profiles/furnace-4")
        assert page.status_code == 200
        text = " ".join(page.text.split())
        assert "recorded on 2026-10-15" in text
        assert "never replaces the furnace surveys and instrument checks" in text
        h = done.outcome.params[0]
        assert f"{h.value:.4g}" in text and f"{h.low:.4g} to {h.high:.4g}" in text
        payload = json.loads(re.search(r'id="profile-data">(.*?)</script>', page.text, re.S).group(1))  # type: ignore[union-attr]
        assert payload["labels"] == ["PL-1 TC1 (core)", "PL-1 TC2 (surface)"]
        assert len(payload["curves"]) == 4 and len(payload["residuals"]) == 2
        readings = payload["curves"][1]
        assert readings[1][0] == 20.0  # the first reading, 860 - 840 degC, shown as read
        assert len(payload["residuals"][0][0]) == 20  # every reading after time zero lies in the step

        api.cookies.set(UNITS_COOKIE, Units.parse("F-mm").cookie())
        in_f = json.loads(
            re.search(
                r'id="profile-data">(.*?)</script>', api.get("/ui/profiles/furnace-4").text, re.S
            ).group(1)  # type: ignore[union-attr]
        )
        assert in_f["delta_unit"] == "°F"
        assert abs(in_f["curves"][1][1][0] - (readings[1][0] * 1.8 + 32)) < 0.01
        assert abs(in_f["residuals"][0][1][0] - payload["residuals"][0][1][0] * 1.8) < 0.01

        listing = api.get("/ui/profiles")
        assert "furnace-4" in listing.text and "2026-10-15" in listing.text
        missing = api.get("/ui/profiles/nope")
        assert missing.status_code == 404 and "no exchange profile named" in missing.text
