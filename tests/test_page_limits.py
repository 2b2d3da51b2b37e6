"""The page's scripts cut names and titles to the service's own limits (service/limits.py), so a
name the page writes is never refused for its length."""

from __future__ import annotations

import re
from pathlib import Path

from service import limits

WEB = Path(__file__).resolve().parents[1] / "service" / "http" / "web"


def _constant(script: str, name: str) -> int:
    match = re.search(rf"const {name} = (\d+);", (WEB / script).read_text())
    assert match, f"{name} not found in {script}"
    return int(match.group(1))


def test_the_page_cuts_chart_titles_and_record_names_at_the_services_limits():
    assert _constant("app.js", "TITLE_LIMIT") == limits.MAX_CHART_TITLE_LENGTH
    assert _constant("library.js", "NAME_LIMIT") == limits.MAX_SCENARIO_NAME_LENGTH
