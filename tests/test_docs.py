"""The repository carries its own documents: nothing points outside it, every relative link in
the documents resolves (to a file or folder of the repository, and to a heading where it names
one), the worked examples of MODEL.md are what the service answers, and the Python examples of
the README and the API guide run."""

from __future__ import annotations

import re
import subprocess
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

#: The documents whose relative links must resolve.
DOCUMENTS = ("README.md", "DEVELOPERS.md", "service/engine/MODEL.md", "openapi/API.md")

#: Spellings of a pointer outside the repository (built in pieces so this file does not match).
OUTSIDE = (
    "../" + "shared",
    "/" + "work/",
    "shared/" + "MODEL.md",
    "shared/" + "API.md",
    "STYLE" + ".md",
    "PITFALLS" + ".md",
)


def _tracked_files() -> list[Path]:
    try:
        listed = subprocess.run(
            ["git", "ls-files", "-z"], cwd=ROOT, capture_output=True, check=True, timeout=60
        ).stdout.decode()
        names = [n for n in listed.split("\0") if n]
    except (OSError, subprocess.SubprocessError):  # no git (an unpacked source tree): walk it
        names = [
            str(p.relative_to(ROOT))
            for p in ROOT.rglob("*")
            if p.is_file() and not any(part.startswith(".") for part in p.relative_to(ROOT).parts[:-1])
        ]
    return [ROOT / n for n in names if (ROOT / n).is_file()]


def test_no_tracked_file_points_outside_the_repository():
    files = _tracked_files()
    assert any(f.name == "MODEL.md" for f in files)  # the walk found the documents
    found = []
    for path in files:
        data = path.read_bytes()
        if b"\0" in data[:8192]:  # binary (images)
            continue
        text = data.decode("utf-8", errors="replace")
        for n, line in enumerate(text.splitlines(), 1):
            found += [f"{path.relative_to(ROOT)}:{n}: {s}" for s in OUTSIDE if s in line]
    assert found == []


def _without_code(markdown: str) -> str:
    """The text outside fenced code blocks and inline code spans."""
    markdown = re.sub(r"^```.*?^```", "", markdown, flags=re.S | re.M)
    return re.sub(r"`[^`\n]*`", "", markdown)


def _links(markdown: str) -> list[str]:
    return re.findall(r"\[[^\]\n]*\]\(([^)\s]+)\)", _without_code(markdown))


def _anchor(heading: str) -> str:
    """GitHub's anchor of a heading: lower case, punctuation dropped, spaces to hyphens."""
    text = heading.strip().lower().replace("`", "")
    text = re.sub(r"[^\w\- ]", "", text)
    return text.replace(" ", "-")


def _anchors(markdown: str) -> set[str]:
    markdown = re.sub(r"^```.*?^```", "", markdown, flags=re.S | re.M)
    out: set[str] = set()
    for heading in re.findall(r"^#{1,6} +(.+?) *$", markdown, flags=re.M):
        anchor, n = _anchor(heading), 1
        while anchor in out:  # repeated headings get -1, -2, ...
            anchor, n = f"{_anchor(heading)}-{n}", n + 1
        out.add(anchor)
    return out


def test_the_anchor_rule_matches_githubs():
    assert _anchor("2. Supply elasticity over time (partial adjustment)") == (
        "2-supply-elasticity-over-time-partial-adjustment"
    )
    assert _anchor("13. Homes that last: the `stock` schedule") == ("13-homes-that-last-the-stock-schedule")
    assert _links("[a](b.md) `[c](d.md)` [e](f.md#g)") == ["b.md", "f.md#g"]


def _broken_links(source: Path, root: Path = ROOT) -> list[str]:
    """Relative links of `source` that name no file or folder under `root`, or no heading."""
    broken = []
    for link in _links(source.read_text()):
        if re.match(r"^[a-z][a-z0-9+.-]*:", link):  # https:, mailto: ...: not ours to check
            continue
        target, _, anchor = link.partition("#")
        path = (source.parent / target).resolve() if target else source
        if not path.exists() or root not in path.parents:
            broken.append(link)
        elif anchor and path.suffix == ".md" and anchor not in _anchors(path.read_text()):
            broken.append(link)
    return broken


def test_the_link_check_finds_broken_links(tmp_path):
    (tmp_path / "there.md").write_text("# A heading\n")
    doc = tmp_path / "doc.md"
    doc.write_text(
        "[ok](there.md) [ok](there.md#a-heading) [web](https://example.org/x) "
        "[missing](nowhere.md) [bad anchor](there.md#no-such) [outside](../x.md)"
    )
    assert _broken_links(doc, root=tmp_path) == ["nowhere.md", "there.md#no-such", "../x.md"]


@pytest.mark.parametrize("document", DOCUMENTS)
def test_every_relative_link_of_the_documents_resolves(document):
    source = ROOT / document
    assert _links(source.read_text()), f"{document} links to nothing"
    assert _broken_links(source) == []


def test_model_md_keeps_the_section_numbers_the_code_cites():
    model = (ROOT / "service" / "engine" / "MODEL.md").read_text()
    numbers = [int(n) for n in re.findall(r"^## (\d+)\. ", model, flags=re.M)]
    assert numbers == list(range(1, 21))


def test_the_quillbrook_worked_example_is_what_the_service_answers():
    """MODEL.md, "Worked examples", Quillbrook: the first year of a freeze, worked by hand from
    sections 3-6 (linear form: the rent rises by D/(eps - eta), the shortage is Qd(c) - Qs(c), the
    loss is the triangle 1/2 (Q* - Q)(MV - c) x 12), and the totals from running the demo."""
    from service import simulate
    from service.examples import example_request

    body = simulate(example_request("quillbrook-rent-freeze"))
    paths = {p["name"]: p for p in body["paths"]}
    summary = {s["name"]: s for s in body["summary"]}
    free, freeze = paths["free market"], paths["rent freeze"]
    d = 0.8 * 0.08 / 3 + 1.0 * 0.015
    assert free["consumer_price"][1] == pytest.approx(1180 * (1 + d / 0.5), rel=1e-12)
    assert round(free["consumer_price"][1], 2) == 1265.75 and round(free["quantity"][1]) == 54392
    assert freeze["quantity"][1] == 54000 and round(freeze["shortage"][1]) == 1962
    assert round(freeze["marginal_value"][1], 2) == 1287.18
    triangle = 0.5 * (free["quantity"][1] - 54000) * (freeze["marginal_value"][1] - 1180) * 12
    assert freeze["deadweight_loss"][1] == pytest.approx(triangle, rel=1e-9)
    assert round(freeze["deadweight_loss"][1]) == 252352
    assert round(freeze["consumer_surplus_change"][1] / 1e6, 1) == 55.5
    assert round(freeze["producer_surplus_change"][1] / 1e6, 1) == -55.8
    assert round(summary["rent freeze"]["total_deadweight_loss"] / 1e6) == 459
    assert round(summary["rent freeze"]["discounted_deadweight_loss"] / 1e6) == 314
    assert round(summary["2.5% cap"]["total_deadweight_loss"] / 1e6, 1) == 1.9


@pytest.mark.parametrize("document", ["README.md", "openapi/API.md"])
def test_the_python_examples_of_the_documents_run(document, capsys):
    """Examples in the documents that never run go stale: each Python block runs as written."""
    blocks = re.findall(r"^```python\n(.*?)^```", (ROOT / document).read_text(), flags=re.S | re.M)
    assert blocks
    for block in blocks:
        namespace: dict = {}
        exec(compile(block, document, "exec"), namespace)
        results = [v for k, v in namespace.items() if not k.startswith("__")]
        assert any(isinstance(v, dict) and "paths" in v for v in results)  # it computed an answer


def test_the_api_guide_names_every_field_of_a_policy_summary():
    """Every member a policy's summary may carry (the response schema) appears in openapi/API.md."""
    from service.schemas.responses import PolicySummarySchema

    guide = (ROOT / "openapi" / "API.md").read_text()
    fields = PolicySummarySchema().fields
    assert "distribution_totals_discounted" in fields
    assert [name for name in fields if not re.search(rf"`{name}\b", guide)] == []


def test_the_library_limits_in_the_api_guide_and_on_the_page_are_limits_py():
    """The API guide's Limits table and the page's unit fields state the numbers the service
    checks (service/limits.py), so a caller and an analyst meet them before a 422 does."""
    from service import limits

    guide = (ROOT / "openapi" / "API.md").read_text(encoding="utf-8")
    rows = {
        "a library record's name / notes": (
            f"{limits.MAX_SCENARIO_NAME_LENGTH} / {limits.MAX_SCENARIO_NOTES_LENGTH:,} characters"
        ),
        "a library record's tags": (
            f"{limits.MAX_SCENARIO_TAGS}, each at most {limits.MAX_SCENARIO_TAG_LENGTH} characters"
        ),
        "a library record's display units": f"each at most {limits.MAX_SCENARIO_UNIT_LENGTH} characters",
        "records per key in the library": f"{limits.MAX_RECORDS_PER_OWNER:,}",
        "revisions per record": f"{limits.MAX_REVISIONS_PER_RECORD}",
        "records per page of `GET /v1/scenarios`": (
            f"{limits.MAX_SCENARIO_PAGE} ({limits.DEFAULT_SCENARIO_PAGE} unless"
        ),
    }
    for what, limit in rows.items():
        line = next(line for line in guide.splitlines() if line.startswith(f"| {what} |"))
        assert limit in line, (what, line)
    page = (ROOT / "service" / "http" / "web" / "index.html").read_text(encoding="utf-8")
    unit_inputs = re.findall(r'<input id="u-[a-z]+"[^>]*>', page)
    assert len(unit_inputs) == 5
    for tag in unit_inputs:
        assert f'maxlength="{limits.MAX_SCENARIO_UNIT_LENGTH}"' in tag, tag
