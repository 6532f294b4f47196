"""`pactlang report`: every bundled agreement's page renders in headless
Chromium with no console errors and no network requests, and its charts are
drawn; the page is self-contained and says the caution."""

from __future__ import annotations

import os
import re
import shutil
from pathlib import Path

import pytest

from pactlang.report.html import ReportInputError, build_report

ROOT = Path(__file__).resolve().parent.parent
AGREEMENTS = sorted(p for p in (ROOT / "agreements").glob("*.deal") if not p.stem.endswith("_bad"))
CHROMIUM = os.environ.get("PACTLANG_CHROMIUM") or shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.fixture(scope="module")
def pages(tmp_path_factory):
    """Every bundled agreement's report, written once for the module."""
    out = tmp_path_factory.mktemp("reports")
    written = {}
    for path in AGREEMENTS:
        target = out / f"{path.stem}.html"
        target.write_text(build_report(str(path)), encoding="utf-8")
        written[path.stem] = target
    return written


def test_pages_are_self_contained_and_say_the_caution(pages):
    for name, path in pages.items():
        html = path.read_text(encoding="utf-8")
        assert "<script" not in html and "@import" not in html and "@font-face" not in html, name
        # no reference that a browser would fetch: only in-page anchors
        assert not re.search(r"""(?:src|href)\s*=\s*["'](?!#)""", html), name
        assert not re.search(r"https?://(?!www.w3.org/)", html), name
        assert "do not replace legal, financial or regulatory" in html, name
        assert "<svg" in html and "chart-payouts" in html, name


def test_chart_kinds_appear_where_they_apply(pages):
    def kinds(name):
        return set(re.findall(r'class="chart chart-(\w+)"', pages[name].read_text(encoding="utf-8")))

    assert kinds("licence_pool") == {"payouts", "excess", "triangle"}  # three parties
    assert kinds("reservoir_scrb") >= {"triangle"}
    assert "ranged" in kinds("water_main_ranges") and "ranged" in kinds("runway_shapley_ranges")
    assert "triangle" not in kinds("water_main_ranges")
    # the curve of per_metre holds need of sky_charter at 15, and writes other values as decimals
    runway = pages["runway_shapley_ranges"].read_text(encoding="utf-8")
    assert "stable as per_metre varies (need of sky_charter = 15)" in runway
    assert "stable as need of sky_charter varies (per_metre = 1.4)" in runway and "7/5" not in runway


def test_failing_page_lists_the_counterexamples_and_marks_the_requirement_line(pages):
    html = pages["cold_store_unstable"].read_text(encoding="utf-8")
    assert "two of the five parties (orchard_a and orchard_b) would earn 39.2 kEUR more on their own" in html
    assert "<td>{orchard_a, orchard_b}</td>" in html
    # the line of `require stable within 5` (line 20) is marked as failing
    assert re.search(r'<span class="line marked-fails" id="L20">', html)
    assert "Per party" in html and "class=\"member\"" in html


def test_bad_agreement_is_refused_with_its_diagnostics(tmp_path):
    with pytest.raises(ReportInputError) as info:
        build_report(str(ROOT / "agreements" / "licence_pool_bad.deal"))
    assert any("lab_sooth" in d.message for d in info.value.report.diagnostics)


def test_report_command_writes_the_file_and_exits_2_on_bad_input(tmp_path):
    from typer.testing import CliRunner

    from pactlang.cli import app

    target = tmp_path / "out.html"
    ok = CliRunner().invoke(app, ["report", str(ROOT / "agreements" / "licence_pool.deal"), "-o", str(target)])
    assert ok.exit_code == 0 and target.read_text(encoding="utf-8").startswith("<!DOCTYPE html>")
    bad = CliRunner().invoke(app, ["report", str(ROOT / "agreements" / "licence_pool_bad.deal"), "-o", str(target)])
    assert bad.exit_code == 2 and "unknown party `lab_sooth`" in bad.output


@pytest.mark.skipif(CHROMIUM is None, reason="chromium is not installed (.ci/run installs it)")
def test_every_report_renders_in_headless_chromium(pages, tmp_path):
    sync_api = pytest.importorskip("playwright.sync_api", reason="playwright is not installed (test extra)")
    with sync_api.sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=["--no-sandbox"])
        try:
            for name, path in pages.items():
                page = browser.new_page(viewport={"width": 900, "height": 1200})
                errors, requests = [], []
                page.on("console", lambda m, errors=errors: errors.append(m.text) if m.type == "error" else None)
                page.on("pageerror", lambda e, errors=errors: errors.append(str(e)))
                page.on("request", lambda r, requests=requests: requests.append(r.url))
                page.goto(path.as_uri())
                shot = tmp_path / f"{name}.png"
                page.screenshot(path=str(shot), full_page=True)
                assert shot.stat().st_size > 10_000, name
                assert errors == [], (name, errors)
                assert requests == [path.as_uri()], (name, requests)  # the page itself, nothing else
                charts = page.query_selector_all("figure.chart svg")
                assert charts, name
                for svg in charts:
                    box = svg.bounding_box()
                    assert box and box["width"] > 100 and box["height"] > 50, name
                    assert len(svg.query_selector_all("path")) >= 3, name  # axes, bars or lines are drawn
                page.close()
        finally:
            browser.close()
