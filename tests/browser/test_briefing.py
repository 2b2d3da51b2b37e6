"""The briefing printed to PDF in headless Chromium (Playwright's page.pdf) on A4 and Letter, read
back with poppler (pdfinfo, pdftotext, pdftoppm): its pages are counted, its text checked, and no
word lies outside the page (a cut table would). Page pictures go to tests/artifacts/."""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from service import simulate
from service.examples import example_request

ARTIFACTS = Path(__file__).resolve().parents[1] / "artifacts"
pytestmark = pytest.mark.slow
UNITS = {"currency": "EUR", "quantity": "homes", "unit": "home", "price_interval": "month", "period": "year"}
#: Page sizes in PostScript points (1/72 inch): ISO 216 A4 is 210 x 297 mm, US Letter 8.5 x 11 in.
SIZES = {"A4": (595.28, 841.89), "Letter": (612.0, 792.0)}


@pytest.fixture(scope="module")
def poppler():
    if shutil.which("pdftotext") is None:
        if os.environ.get("SHOCKPATH_REQUIRE_BROWSER"):
            pytest.fail("poppler-utils is required here (apt-get install poppler-utils)")
        pytest.skip("poppler-utils is not installed")


@pytest.fixture(scope="module")
def briefing(app):
    """briefing(name, title): the briefing of a demo as /v1/briefing writes it, drawn once and
    printed on both page sizes (its charts take seconds to draw)."""
    drawn: dict[tuple[str, str], str] = {}

    def draw(name: str, title: str) -> str:
        if (name, title) not in drawn:
            body = {**example_request(name), "title": title, "units": UNITS}
            response = app.test_client().post("/v1/briefing", json=body)
            assert response.status_code == 200
            drawn[name, title] = response.get_data(as_text=True)
        return drawn[name, title]

    return draw


def _words(pdf: Path) -> list[tuple[int, float, float, float, float, str]]:
    """(page, xMin, yMin, xMax, yMax, word) of every word, from pdftotext -bbox."""
    out = subprocess.run(
        ["pdftotext", "-bbox", str(pdf), "-"], check=True, capture_output=True, text=True
    ).stdout
    words, page = [], 0
    for line in out.splitlines():
        if "<page " in line:
            page += 1
        m = re.search(r'xMin="([\d.]+)" yMin="([\d.]+)" xMax="([\d.]+)" yMax="([\d.]+)">([^<]*)</word>', line)
        if m:
            words.append((page, *(float(m.group(i)) for i in range(1, 5)), m.group(5)))
    return words


@pytest.mark.parametrize("name", ["corrowdale-older-buildings", "essvane-freeze-under-inflation"])
@pytest.mark.parametrize("size", ["A4", "Letter"])
def test_the_briefing_prints_whole_on_a4_and_letter(page, poppler, briefing, tmp_path, name, size):
    request = example_request(name)
    answer = simulate(request)
    title = f"{name.split('-')[0].capitalize()} briefing"
    page.set_content(briefing(name, title))
    pdf = tmp_path / f"{name}-{size}.pdf"
    page.pdf(path=str(pdf), format=size, print_background=True)
    info = subprocess.run(["pdfinfo", str(pdf)], check=True, capture_output=True, text=True).stdout
    pages = int(re.search(r"Pages:\s+(\d+)", info).group(1))
    width, height = (float(x) for x in re.search(r"Page size:\s+([\d.]+) x ([\d.]+)", info).groups())
    assert (width, height) == pytest.approx(SIZES[size], abs=1)
    assert 3 <= pages <= 8, pages
    text = subprocess.run(
        ["pdftotext", "-layout", str(pdf), "-"], check=True, capture_output=True, text=True
    ).stdout
    flat = " ".join(text.split())
    for needle in (
        title,
        "The question",
        "Inputs in plain words",
        "Summary",
        "Who gains and who loses",
        "Cautions",
        answer["scenario_id"],
        f"model version {answer['model_version']}",
        "today's money (period 0)",
    ):
        assert needle in flat, needle
    for policy in request["policies"]:
        assert policy["name"] in flat
    for s in answer["summary"]:
        assert f"{s['final_quantity']:,.0f}" in flat  # the summary's numbers are all there
    # No word outside the page (a table cut at the right edge would put some there), and the
    # summary's last column is on the page.
    words = _words(pdf)
    assert words and all(
        0 <= x0 and x1 <= width and 0 <= y0 and y1 <= height for _, x0, y0, x1, y1, _ in words
    )
    ARTIFACTS.mkdir(exist_ok=True)
    stem = ARTIFACTS / f"briefing-{name.split('-')[0]}-{size}"
    subprocess.run(["pdftoppm", "-r", "45", "-png", str(pdf), str(stem)], check=True)
    assert len(list(ARTIFACTS.glob(f"{stem.name}-*.png"))) >= pages
