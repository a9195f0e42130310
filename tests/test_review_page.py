"""The review page: findings first, engineering units, and the interactive 3D view
driven in a real browser (headless Chromium from the Debian packages, through
selenium; `.ci/run` installs both). Never skipped: a machine without Chromium
fails here with the install line to run.
"""

from __future__ import annotations

import io
import json
import re
import shutil
import time
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from PIL import Image

from builder.analysis.modes import compute_modes
from builder.linear import assemble
from builder.load import load_assembly
from builder.report import write_report

DEMO = Path(__file__).parent.parent / "assemblies" / "compact_car_flexible.yaml"
VAN = Path(__file__).parent / "models" / "light_van_flexible.yaml"
INSTALL = "apt-get install -y chromium chromium-driver"


class _Page(HTMLParser):
    """Section ids in order, the view's data, and the text of each table cell."""

    def __init__(self) -> None:
        super().__init__()
        self.sections: list[str] = []
        self.h2: list[str] = []
        self.cells: list[str] = []
        self.data = ""
        self._in: str | None = None

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag == "section":
            self.sections.append(attrs.get("id") or "")
        if tag == "script" and attrs.get("id") == "lgv-data":
            self._in = "data"
        elif tag in ("td", "h2"):
            self._in = tag

    def handle_endtag(self, tag):
        if tag in ("script", "td", "h2"):
            self._in = None

    def handle_data(self, data):
        if self._in == "data":
            self.data += data
        elif self._in == "td":
            self.cells.append(data)
        elif self._in == "h2":
            self.h2.append(data)


@pytest.fixture(scope="module")
def van_page(tmp_path_factory):
    assembly = load_assembly(VAN)
    model = assemble(assembly)
    modes = compute_modes(model)
    path = write_report(assembly, model, tmp_path_factory.mktemp("van"), modes=modes, sheet=4)
    return path, modes


def test_page_leads_with_findings_in_engineering_units(van_page):
    path, modes = van_page
    page = _Page()
    page.feed(path.read_text(encoding="utf-8"))
    # findings, then the 3D view, before every inventory
    assert page.sections[:2] == ["findings", "view"] and page.sections[-1] == "inventory"
    assert page.h2.index("Findings") < page.h2.index("Model checks") < page.h2.index("Model summary")
    text = path.read_text(encoding="utf-8")
    findings = text[text.index('id="findings"'):text.index('id="view"')]
    # the model's own first torsion and bending (labels of the split-body plugin)
    torsion = next(m for m in modes.modes if "first torsion" in m.label)
    bending = next(m for m in modes.modes if "first vertical bending" in m.label)
    assert f"{torsion.frequency_hz:.2f}" in findings and f"{bending.frequency_hz:.2f}" in findings
    assert "Comfort on an ISO 8608 class B road" in findings and "Warnings" in findings
    # properties in kN/m, N s/m and mm: no raw SI exponents in the link table
    links = [c for c in page.cells if c.startswith(("stiffness", "axis", "EA"))]
    assert any("kN/m" in c for c in links) and any("N s/m" in c for c in links)
    assert not any(re.search(r"\de[+-]?\d", c) for c in links)
    assert "cg (mm)" in text
    data = json.loads(page.data)
    assert len(data["modes"]) >= 12 and data["modes"][0]["groups"]


def test_demo_report_is_small_enough_to_mail(tmp_path):
    assembly = load_assembly(DEMO)
    path = write_report(assembly, assemble(assembly), tmp_path)
    assert path.stat().st_size < 10e6       # the limit for the demo car


def _browser():
    chromium = shutil.which("chromium") or shutil.which("chromium-browser")
    driver = shutil.which("chromedriver")
    if not chromium or not driver:
        pytest.fail(f"the review-page test needs Chromium and its driver: {INSTALL}")
    from selenium import webdriver
    from selenium.webdriver.chrome.options import Options
    from selenium.webdriver.chrome.service import Service

    options = Options()
    for arg in ("--headless=new", "--no-sandbox", "--disable-dev-shm-usage",
                "--use-angle=swiftshader", "--enable-unsafe-swiftshader",
                "--window-size=1280,1100"):
        options.add_argument(arg)
    options.binary_location = chromium
    options.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    return webdriver.Chrome(options=options, service=Service(driver))


def _wait(browser, script: str, seconds: float = 30.0):
    end = time.monotonic() + seconds
    while time.monotonic() < end:
        value = browser.execute_script(script)
        if value:
            return value
        time.sleep(0.1)
    raise AssertionError(f"page never satisfied: {script}")


def _canvas(browser) -> np.ndarray:
    png = browser.find_element("id", "lgv-canvas").screenshot_as_png
    return np.asarray(Image.open(io.BytesIO(png)).convert("RGB")).astype(int)


def test_view_in_chromium_changes_with_the_mode(van_page):
    path, _ = van_page
    from selenium.webdriver.support.ui import Select

    browser = _browser()
    try:
        browser.get(path.resolve().as_uri())
        _wait(browser, "return window.lumpgraphView && window.lumpgraphView.frames > 3")
        errors = [e for e in browser.get_log("browser") if e["level"] == "SEVERE"]
        assert not errors, errors
        browser.find_element("id", "lgv-play").click()           # pause: a still frame
        frames = browser.execute_script("return window.lumpgraphView.frames")
        _wait(browser, f"return window.lumpgraphView.frames > {frames + 2}")
        first = _canvas(browser)
        # not blank: the vehicle stands out from the paper, in many colours
        assert first.reshape(-1, 3).std(axis=0).max() > 10
        assert len(np.unique(first.reshape(-1, 3), axis=0)) > 50
        tile = browser.find_element("id", "lgv-tile").text
        Select(browser.find_element("id", "lgv-mode")).select_by_index(12)
        assert browser.execute_script("return window.lumpgraphView.mode") == 12
        frames = browser.execute_script("return window.lumpgraphView.frames")
        _wait(browser, f"return window.lumpgraphView.frames > {frames + 2}")
        second = _canvas(browser)
        assert browser.find_element("id", "lgv-tile").text != tile
        changed = np.abs(first - second).max(axis=2) > 30
        assert changed.mean() > 0.005
        # rotating by dragging moves the picture too
        from selenium.webdriver import ActionChains

        canvas = browser.find_element("id", "lgv-canvas")
        ActionChains(browser).click_and_hold(canvas).move_by_offset(120, 0).release().perform()
        frames = browser.execute_script("return window.lumpgraphView.frames")
        _wait(browser, f"return window.lumpgraphView.frames > {frames + 2}")
        turned = _canvas(browser)
        assert (np.abs(turned - second).max(axis=2) > 30).mean() > 0.005
        errors = [e for e in browser.get_log("browser") if e["level"] == "SEVERE"]
        assert not errors, errors
    finally:
        browser.quit()
