"""The HTML report: well formed, escaped, every figure present, and the design-exception section."""

from __future__ import annotations

import re
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

import markdown_it
import pytest
import yaml

from mergecheck.assessment import assess
from mergecheck.exception_study import design_exception
from mergecheck.site import load_site

VOID = {"meta", "br", "hr", "img", "input", "link", "col", "area", "base", "embed", "source", "track", "wbr"}


class Structure(HTMLParser):
    """Checks that every non-void element is closed in order; counts tags (SVG children may self-close)."""

    def __init__(self) -> None:
        super().__init__()
        self.stack: list[str] = []
        self.counts: dict[str, int] = {}
        self.errors: list[str] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.counts[tag] = self.counts.get(tag, 0) + 1
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.counts[tag] = self.counts.get(tag, 0) + 1

    def handle_endtag(self, tag: str) -> None:
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"unexpected </{tag}> with open {self.stack[-3:]}")
            return
        self.stack.pop()


def parse(text: str) -> Structure:
    parser = Structure()
    parser.feed(text)
    parser.close()
    return parser


def test_report_is_well_formed_with_every_figure(cli: Any, repo: Path, tmp_path: Path) -> None:
    page = tmp_path / "report.html"
    run = cli("check", repo / "examples" / "larkspur-road.yaml", "--html", page)
    assert run.code == 1
    text = page.read_text()
    structure = parse(text)
    assert structure.errors == [] and structure.stack == []
    assert structure.counts.get("svg") == 4  # layout, speed, merge probability, lengths
    assert structure.counts.get("script", 0) == 0  # self-contained, no scripts
    assert "http://" not in text.replace('xmlns="http://www.w3.org/2000/svg"', "").replace(
        'xmlns:xlink="http://www.w3.org/1999/xlink"', ""
    ).replace("http://www.w3.org/1999/xlink", "").replace("http://www.w3.org/2000/svg", "")
    for heading in (
        "1. Layout",
        "2. Speed along the ramp",
        "3. Finding a gap",
        "4. Length required",
        "Design exception",
        "Assumptions",
        "Cautions",
    ):
        assert heading in text
    assert "licensed engineer" in text


def _example_renamed(repo: Path, tmp_path: Path, name: str, notes: str) -> Path:
    """The Willowmere example with the user's text in its name and notes, written to a new site file."""
    site = yaml.safe_load((repo / "examples" / "willowmere-level.yaml").read_text())
    site["name"], site["notes"] = name, notes
    site_file = tmp_path / "site.yaml"
    site_file.write_text(yaml.safe_dump(site))
    return site_file


def test_user_text_is_escaped(cli: Any, repo: Path, tmp_path: Path) -> None:
    site_file = _example_renamed(repo, tmp_path, "<script>alert(1)</script>", "Ramp & <b>bold</b> claims")
    page = tmp_path / "report.html"
    assert cli("check", site_file, "--html", page, "--exception").code == 0
    text = page.read_text()
    assert "<script" not in text and "&lt;script&gt;alert(1)&lt;/script&gt;" in text
    assert "<b>bold</b>" not in text and "&lt;b&gt;bold&lt;/b&gt;" in text
    assert "Design exception" in text  # asked for even though the site meets
    assert parse(text).errors == []


def test_us_units_in_report(cli: Any, repo: Path, tmp_path: Path) -> None:
    page = tmp_path / "report.html"
    cli("check", repo / "examples" / "quarry-hill-upgrade.yaml", "--html", page, "--units", "us")
    text = page.read_text()
    assert "mph" in text and " ft" in text and "km/h" not in text.split("Assumptions</h2>")[0]


def test_mitigation_lane_length_passes_when_fed_back(cli: Any, repo: Path, tmp_path: Path) -> None:
    """Issue 5: the lane length the design-exception section computes, used as the site's lane, meets the check.

    The example without its single-unit truck, whose crawl speed on the 1.5 % grade (87.0 km/h) does not
    exceed the merge speed: no length helps that truck, and the example's report says so."""
    source = repo / "examples" / "harbour-street-constrained.yaml"
    site = yaml.safe_load(source.read_text())
    site["ramp"]["vehicles"] = {"passenger-car": 0.95, "semitrailer-fleet": 0.05}
    site["policy"] = str(repo / "examples" / "agency-policy-table.yaml")
    derived = tmp_path / "derived.yaml"
    derived.write_text(yaml.safe_dump(site))
    exception = design_exception(assess(load_site(str(derived))))
    lane = next(m for m in exception.mitigations if m.name == "Lengthen the lane")
    assert lane.assessment is not None and lane.assessment.verdict == "meets"
    length = lane.assessment.site.lane_length
    site["geometry"]["lane_length"] = f"{length:.3f} m"
    site["policy"] = str(repo / "examples" / "agency-policy-table.yaml")
    site_file = tmp_path / "site.yaml"
    site_file.write_text(yaml.safe_dump(site))
    run = cli("check", site_file, "--json")
    assert run.code == 0, run.json()["summary"]


def test_markdown_exception_section_only_when_short_or_asked(cli: Any, repo: Path, tmp_path: Path) -> None:
    short, fine, asked = tmp_path / "short.md", tmp_path / "fine.md", tmp_path / "asked.md"
    cli("check", repo / "examples" / "larkspur-road.yaml", "--markdown", short)
    cli("check", repo / "examples" / "willowmere-level.yaml", "--markdown", fine)
    cli("check", repo / "examples" / "willowmere-level.yaml", "--markdown", asked, "--exception")
    assert "## Design exception" in short.read_text() and "Mitigation options" in short.read_text()
    assert "## Design exception" not in fine.read_text()
    assert "## Design exception" in asked.read_text()


def test_user_text_in_markdown_is_text_not_markup(cli: Any, repo: Path, tmp_path: Path) -> None:
    """Markdown passes raw HTML through and reads links and emphasis (CommonMark 0.31, sections 4.6, 6.3, 6.4):
    a site name or note must come out as the text the user wrote. Rendered with markdown-it-py, a CommonMark
    implementation (installed with rich), the report holds no element the user typed, and the words survive."""
    site_file = _example_renamed(
        repo,
        tmp_path,
        "Ramp <img src=x onerror=alert(1)> | [click](javascript:alert(1))",
        "# not a heading <script>alert(1)</script> **not bold** _not italic_ ![i](http://x/i.png)",
    )
    report = tmp_path / "report.md"
    assert cli("check", site_file, "--markdown", report).code == 0
    rendered = markdown_it.MarkdownIt("commonmark").enable("table").render(report.read_text())
    for element in ("<img", "<script", "<a ", "<strong>not", "<em>not", "<h1>not"):
        assert element not in rendered, element
    assert "&lt;img src=x onerror=alert(1)&gt;" in rendered and "**not bold**" in rendered


CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.mark.skipif(CHROMIUM is None, reason="no Chromium on this machine (Debian package chromium)")
def test_the_report_prints_with_a_running_header_and_page_numbers(cli: Any, repo: Path, tmp_path: Path) -> None:
    """Chromium's print to PDF (a real browser): every page carries the site name and 'page x of y' (CSS Paged
    Media margin boxes), and a site name that tries to leave the CSS string prints as written."""
    pdftotext = shutil.which("pdftotext")
    site = yaml.safe_load((repo / "examples" / "harbour-street-constrained.yaml").read_text())
    site["name"] = 'Quay "Road" </style> entrance'
    site["policy"] = str(repo / "examples" / "agency-policy-table.yaml")
    source = tmp_path / "site.yaml"
    source.write_text(yaml.safe_dump(site))
    page, pdf = tmp_path / "r.html", tmp_path / "r.pdf"
    assert cli("check", source, "--html", page).code == 1
    subprocess.run(
        [str(CHROMIUM), "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run", "--disable-background-networking",
         f"--user-data-dir={tmp_path / 'profile'}", f"--print-to-pdf={pdf}", "--no-pdf-header-footer", page.as_uri()],
        capture_output=True, timeout=120, check=False,
    )  # fmt: skip
    data = pdf.read_bytes()
    pages = len(re.findall(rb"/Type\s*/Page[^s]", data))
    assert data.startswith(b"%PDF") and pages >= 3
    if pdftotext:
        text = subprocess.run([pdftotext, str(pdf), "-"], capture_output=True, text=True, check=True).stdout
        assert f"page 1 of {pages}" in text and f"page {pages} of {pages}" in text
        assert text.count('Quay "Road" </style> entrance') >= pages
