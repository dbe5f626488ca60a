"""The HTML report in a real browser: Debian's chromium, driven headless by playwright.

.ci/run installs chromium; playwright only drives it (its own browser download is never used).
"""

from __future__ import annotations

import os
import shutil
from html import escape

import pytest
from _report_data import BROWSER_ARGS, CHROMIUM, MURMUR_CASE

import eddyphone
from eddyphone.cautions import GENERAL_CAUTIONS
from eddyphone.export import write_analysis


@pytest.fixture(scope="module")
def rendered(tmp_path_factory):
    out = tmp_path_factory.mktemp("browser")
    analysis = eddyphone.analyze(MURMUR_CASE)
    paths = write_analysis(analysis, out)
    return analysis, paths


def _browser():
    if not os.path.exists(CHROMIUM) and shutil.which("chromium") is None:
        pytest.fail("chromium is needed for the browser test; .ci/run installs it")
    from playwright.sync_api import sync_playwright

    return sync_playwright()


def test_report_plays_shows_figures_and_says_summary_and_cautions(rendered, tmp_path):
    analysis, paths = rendered
    with _browser() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=BROWSER_ARGS)
        try:
            page = browser.new_page(viewport={"width": 1100, "height": 900})
            page.goto(paths["html"].as_uri())
            # The browser decodes the embedded WAV: metadata loaded, duration as recorded.
            page.wait_for_function(
                "document.getElementById('recording-audio').readyState >= 1", timeout=30000)
            duration = page.evaluate("document.getElementById('recording-audio').duration")
            assert duration > 0
            assert abs(duration - analysis.recording.duration_s) < 0.05
            page.wait_for_function(
                "[...document.querySelectorAll('audio.teach-audio')]"
                ".every(a => a.readyState >= 1)", timeout=30000)
            renders = page.evaluate(
                "[...document.querySelectorAll('audio.teach-audio')].map(a => a.duration)")
            assert len(renders) == 4 and all(d > 0 for d in renders)
            # The slowed render is twice as long as the recording (0.5x, pitch kept).
            assert max(renders) == pytest.approx(2 * duration, abs=0.05)
            # Every figure decoded and laid out with a visible size.
            figures = page.locator("figure.figure img")
            assert figures.count() >= 5
            for i in range(figures.count()):
                img = figures.nth(i)
                img.scroll_into_view_if_needed()
                assert img.is_visible()
                assert img.evaluate("e => e.complete && e.naturalWidth > 600")
                box = img.bounding_box()
                assert box["width"] > 500 and box["height"] > 150
            text = page.inner_text("body")
            summary = analysis.summary()
            assert f"{summary['heart_rate_bpm']:.0f} bpm" in text
            assert summary["murmur_description"] in text
            assert analysis.explanation.top().label in text
            for caution in GENERAL_CAUTIONS:
                assert caution in text
            shot = tmp_path / "report.png"
            page.screenshot(path=str(shot), full_page=True)
            assert shot.stat().st_size > 50_000
            # Kept for a human to look at after the run.
            print(f"screenshot: {shot}")
        finally:
            browser.close()


def test_no_request_leaves_the_page(rendered):
    _, paths = rendered
    with _browser() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=BROWSER_ARGS)
        try:
            page = browser.new_page()
            requests = []
            page.on("request", lambda r: requests.append(r.url))
            page.goto(paths["html"].as_uri())
            page.wait_for_load_state("load")
            outside = [u for u in requests if not u.startswith(("file:", "data:"))]
            assert outside == []
            assert escape("Decision support") in page.content()
        finally:
            browser.close()
