"""The HTML report: self-contained, escaped, complete; and checked in a real headless browser."""

from __future__ import annotations

import base64
import datetime as dt
import hashlib
import html
import re
from pathlib import Path

import pytest

from kinetics import __version__
from kinetics.cli import CAUTION, main
from kinetics.output.summary_text import DEFINITIONS

# A title and a species name that would break the page if not escaped.
SCHEME = """title: <script>alert("x")</script> & "quotes" <b>bold</b>
A -> B'    k1 = 0.1 1/min
B' -> C    k2 = 0.05 1/min
start A = 1 mol/L
formula A = C2H4O, B' = C2H4O, C = C2H4O
"""

CHROMIUM = Path("/usr/bin/chromium")


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    folder = tmp_path_factory.mktemp("report")
    scheme = folder / "nasty.scheme"
    scheme.write_text(SCHEME, encoding="utf-8")
    out = folder / "report.html"
    status = main(["report", str(scheme), "--until", "1h", "--points", "61", "--out", str(out)])
    assert status == 0
    return scheme, out, out.read_text(encoding="utf-8")


def test_report_is_one_complete_page(report):
    _, out, text = report
    assert text.startswith("<!DOCTYPE html>")
    assert text.rstrip().endswith("</html>")
    assert [p.name for p in out.parent.iterdir() if p.name.startswith(".")] == []


def test_report_needs_no_network(report):
    _, _, text = report
    # every src/href is inline data or a fragment; no stylesheet or script is fetched
    for url in re.findall(r'(?:src|href)="([^"]*)"', text):
        assert url.startswith(("data:", "#")), url
    assert "<script" not in text
    assert "@import" not in text
    assert "url(" not in text.split("</style>")[0]


def test_user_text_is_escaped(report):
    _, _, text = report
    assert '<script>alert("x")</script>' not in text
    assert "&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt;" in text
    assert "<b>bold</b>" not in text
    assert "B&#x27;" in text
    assert "B'" not in text.split("<style>")[1].split("</style>")[1]


def test_provenance_version_date_and_sha256(report):
    scheme, _, text = report
    digest = hashlib.sha256(scheme.read_bytes()).hexdigest()
    assert digest in text
    assert f"kinetics {__version__}" in text
    today = dt.datetime.now(dt.UTC).strftime("%Y-%m-%d")
    assert today in text


def test_sections_and_contents(report):
    _, _, text = report
    for heading in (
        "Scheme as written",
        "Species graph",
        "Inputs",
        "Balance",
        "Summary quantities",
        "Definitions",
        "Concentrations",
    ):
        assert f">{heading}" in text
    for line in CAUTION.splitlines():
        assert html.escape(line) in text
    assert 'class="caution"' in text
    for definition in DEFINITIONS.values():
        label = definition.partition(": ")[0]
        assert f"<dt>{html.escape(label)}</dt>" in text
    assert html.escape("A -> B'    k1 = 0.1 1/min") in text  # the scheme as written
    assert "0.1 1/min" in text
    assert "0.00166666666" in text  # k1 in 1/s: 0.1/60
    assert '<span class="ok">balanced</span>' in text
    # t_max of B' = ln(k1/k2)/(k1-k2) = 13.8629 min (consecutive first-order reactions,
    # any physical chemistry textbook), 6 significant digits in the summary table
    assert ">0.231049<" in text  # in hours, the unit of --until
    assert "t_max [h]" in text
    assert "B&#x27; [mol/L]" in text


def test_embedded_images_are_png(report):
    _, _, text = report
    images = re.findall(r'src="data:image/png;base64,([^"]+)"', text)
    assert len(images) == 2  # species graph and concentration plot
    for data in images:
        assert base64.b64decode(data)[:8] == b"\x89PNG\r\n\x1a\n"


def _browser_or_skip():
    if not CHROMIUM.exists():
        pytest.skip("needs Debian's chromium at /usr/bin/chromium (apt-get install chromium)")
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        pytest.skip("needs the playwright Python package (pip install playwright)")
    return sync_playwright


@pytest.mark.slow  # starts a browser
@pytest.mark.browser
def test_report_in_headless_chromium(report, tmp_path):
    sync_playwright = _browser_or_skip()
    _, out, _ = report
    problems: list[str] = []
    with sync_playwright() as p:
        browser = p.chromium.launch(
            executable_path=str(CHROMIUM), args=["--no-sandbox", "--disable-gpu"]
        )
        try:
            page = browser.new_page(viewport={"width": 1280, "height": 900})
            page.on(
                "console",
                lambda m: problems.append(m.text) if m.type in ("error", "warning") else None,
            )
            page.on("pageerror", lambda e: problems.append(str(e)))
            page.on("requestfailed", lambda r: problems.append(f"request failed: {r.url}"))
            page.goto(out.as_uri(), wait_until="load")
            title = page.title()
            plot = page.locator("#concentration-plot img")
            natural = plot.evaluate("img => [img.complete, img.naturalWidth, img.naturalHeight]")
            plot.scroll_into_view_if_needed()
            box = plot.bounding_box()
            visible = plot.is_visible()
            heading = page.locator("h1").inner_text()
            shot = tmp_path / "report.png"
            page.screenshot(path=str(shot), full_page=True)
        finally:
            browser.close()
    assert problems == []
    assert title.endswith("kinetics report")
    assert heading.startswith('<script>alert("x")</script>')  # shown as text, not run
    assert natural[0] is True
    assert natural[1] > 0
    assert natural[2] > 0
    assert visible
    assert box is not None
    assert box["width"] > 300
    assert box["height"] > 100
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert shot.stat().st_size > 50_000
