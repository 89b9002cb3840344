"""The app in a real browser: served by `lcoe app`, opened in headless Chromium.

The reference for every figure on the page is the engine itself (lcoe.engine.run on the
same scenario file, formatted by lcoe.outputs.report.fmt): the app must show exactly those.
"""

from __future__ import annotations

import os
import socket
import subprocess
import sys
import time
import urllib.request

import pytest
from conftest import DEMO, DEMO_HOURLY, ROOT, expected_headline, require_tool

from lcoe import engine as model
from lcoe.inputs import scenario as sc
from lcoe.inputs.about import CAUTION

pytestmark = pytest.mark.slow

CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
                 "--disable-sync", "--no-first-run"]


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _wait_healthy(url: str, proc: subprocess.Popen, timeout: float = 60.0) -> None:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if proc.poll() is not None:
            out = proc.stdout.read().decode(errors="replace") if proc.stdout else ""
            pytest.fail(f"the app server exited with {proc.returncode}: {out[-2000:]}")
        try:
            with urllib.request.urlopen(url, timeout=2) as r:
                if r.read().decode().strip() == "ok":
                    return
        except OSError:
            pass
        time.sleep(0.3)
    pytest.fail(f"the app server did not answer {url} within {timeout:.0f} s")


@pytest.fixture
def server():
    """`lcoe app` on a free loopback port; always stopped afterwards."""
    port = _free_port()
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    proc = subprocess.Popen([sys.executable, "-m", "lcoe", "app", "--port", str(port), "--address", "127.0.0.1"],
                            cwd=ROOT, env=env, stdout=subprocess.PIPE, stderr=subprocess.STDOUT)
    try:
        _wait_healthy(f"http://127.0.0.1:{port}/_stcore/health", proc)
        yield f"http://127.0.0.1:{port}/"
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(timeout=10)
        if proc.stdout:
            proc.stdout.close()


def test_headline_figures_in_the_browser(server, tmp_path):
    chromium = require_tool("chromium")
    sync_api = pytest.importorskip("playwright.sync_api")
    scn = sc.load(DEMO)
    expected = expected_headline(model.run(scn))

    with sync_api.sync_playwright() as p:
        browser = p.chromium.launch(executable_path=chromium, args=CHROMIUM_ARGS)
        try:
            page = browser.new_page(viewport={"width": 1500, "height": 1100})
            page.goto(server, wait_until="domcontentloaded")
            metrics = page.locator('[data-testid="stMetric"]')
            page.get_by_text("LCOE, nominal").first.wait_for(timeout=60_000)
            page.locator('[data-testid="stAltairChart"], [data-testid="stVegaLiteChart"]').first.wait_for(
                timeout=60_000)
            page.wait_for_timeout(1500)  # let the charts draw before the screenshot
            shown = {}
            for i in range(metrics.count()):
                m = metrics.nth(i)
                label = m.locator('[data-testid="stMetricLabel"]').inner_text().strip()
                shown[label] = m.locator('[data-testid="stMetricValue"]').inner_text().strip()
            caution = page.get_by_text(CAUTION).count()
            errors = page.locator('[data-testid="stException"]').count()
            alerts = page.locator('[data-testid="stAlertContentError"]').count()
            page.screenshot(path=str(tmp_path / "app.png"), full_page=True)
        finally:
            browser.close()
    assert shown == expected
    assert caution == 1
    assert errors == 0 and alerts == 0
    assert (tmp_path / "app.png").stat().st_size > 10_000


# Text that does not fit: an element that clips its own text (ellipsis or hidden overflow) and is
# narrower than that text, or a chart's text (axis title, tick, legend) reaching more than 4 px
# past its chart's box (4 px: the glyph overhang of a rotated axis title, seen drawn in full).
CLIPPED_JS = """() => {
  const out = [];
  const shown = (el) => { const r = el.getBoundingClientRect(); return r.width > 0 && r.height > 0; };
  for (const el of document.querySelectorAll('[data-testid="stMain"] *, [data-testid="stSidebar"] *')) {
    if (!shown(el) || ![...el.childNodes].some(n => n.nodeType === 3 && n.textContent.trim())) continue;
    const cs = getComputedStyle(el);
    const clips = cs.textOverflow === 'ellipsis' || cs.overflowX === 'hidden' || cs.overflowX === 'clip';
    if (clips && el.scrollWidth > el.clientWidth + 1) out.push('text: ' + el.innerText.slice(0, 80));
  }
  for (const t of document.querySelectorAll('svg text')) {
    const box = t.closest('[data-testid="stVegaLiteChart"], [data-testid="stAltairChart"], .vega-embed');
    if (!box || !shown(t) || !t.textContent.trim()) continue;
    const r = t.getBoundingClientRect(), s = box.getBoundingClientRect();
    if (r.left < s.left - 4 || r.right > s.right + 4 || r.top < s.top - 4 || r.bottom > s.bottom + 4
        || t.textContent.includes('\u2026')) out.push('chart: ' + t.textContent.slice(0, 80) + ' (' +
          [r.left - s.left, s.right - r.right, r.top - s.top, s.bottom - r.bottom].map(Math.round).join(', ') + ')');
  }
  return out;
}"""
TABS = ["Energy", "Cash flow and debt", "Lifetime", "Wind speed", "Wind data", "Monte Carlo", "Tornado", "Compare",
        "Yearly table"]


def _clipped(page) -> list:
    """What CLIPPED_JS finds once the page has settled (a chart still laying out is looked at again)."""
    found = page.evaluate(CLIPPED_JS)
    for _ in range(3):
        if not found:
            break
        page.wait_for_timeout(1500)
        found = page.evaluate(CLIPPED_JS)
    return found


def _settled(page) -> None:
    page.wait_for_timeout(800)
    page.wait_for_function("() => !document.querySelector('[data-testid=\"stStatusWidget\"]')", timeout=120_000)
    page.wait_for_timeout(1200)        # the charts draw after the run ends


@pytest.mark.parametrize("width", [1280, 1920])
def test_nothing_is_clipped_on_any_screen(server, width):
    """Every label, button and chart text fits its element, at 1,280 and 1,920 px, on every tab (with a
    pinned case and a Monte Carlo run, so those screens are full)."""
    chromium = require_tool("chromium")
    sync_api = pytest.importorskip("playwright.sync_api")
    found = {}
    with sync_api.sync_playwright() as p:
        browser = p.chromium.launch(executable_path=chromium, args=CHROMIUM_ARGS)
        try:
            page = browser.new_page(viewport={"width": width, "height": 1000})
            page.goto(server, wait_until="domcontentloaded")
            page.locator('[data-testid="stMetricValue"]').first.wait_for(timeout=120_000)
            _settled(page)
            page.get_by_role("button", name="Pin", exact=True).click()
            _settled(page)
            for tab in TABS:
                page.get_by_role("tab", name=tab, exact=True).click()
                _settled(page)
                if tab == "Monte Carlo":
                    page.get_by_role("textbox", name="Trials [-]").fill("2000")
                    page.get_by_role("textbox", name="Trials [-]").press("Enter")
                    _settled(page)
                    page.get_by_role("button", name="Run the Monte Carlo").click()
                    page.get_by_text("Chance minimum DSCR").first.wait_for(timeout=120_000)
                    _settled(page)
                found[tab] = _clipped(page)
            # the hourly demo's wind data: the record's four charts
            page.locator('[data-testid="stSidebar"] [data-testid="stSelectbox"]').first.click()
            page.get_by_role("option", name=DEMO_HOURLY.name, exact=True).click()
            _settled(page)
            page.get_by_role("tab", name="Wind data", exact=True).click()
            _settled(page)
            drawn = page.locator('[data-testid="stVegaLiteChart"], [data-testid="stAltairChart"]')
            drawn.nth(3).wait_for(timeout=60_000)
            found["Wind data (hourly)"] = _clipped(page)
            hourly_charts = drawn.count()
            assert page.locator('[data-testid="stException"]').count() == 0
        finally:
            browser.close()
    assert {tab: items for tab, items in found.items() if items} == {}
    assert hourly_charts == 4


def _headline(page) -> dict:
    metrics = page.locator('[data-testid="stMetric"]')
    return {metrics.nth(i).locator('[data-testid="stMetricLabel"]').inner_text().strip():
            metrics.nth(i).locator('[data-testid="stMetricValue"]').inner_text().strip() for i in range(metrics.count())}


def _type(page, group: str, label: str, text: str) -> None:
    box = page.get_by_role("textbox", name=label, exact=True)
    if not box.is_visible():
        page.get_by_text(group, exact=True).click()
    box.fill(text)
    box.press("Enter")
    _settled(page)


def test_a_decimal_comma_and_an_out_of_range_value_typed_in_the_browser(server):
    """"36,5" in Fixed O&M is 36.5 (not 365); availability 150 % is refused at its field, the page keeps
    the last valid figures and says they are stale."""
    chromium = require_tool("chromium")
    sync_api = pytest.importorskip("playwright.sync_api")
    scn = sc.load(DEMO)
    with sync_api.sync_playwright() as p:
        browser = p.chromium.launch(executable_path=chromium, args=CHROMIUM_ARGS)
        try:
            page = browser.new_page(viewport={"width": 1280, "height": 1000})
            page.goto(server, wait_until="domcontentloaded")
            page.locator('[data-testid="stMetricValue"]').first.wait_for(timeout=120_000)
            _settled(page)
            _type(page, "Lifetime and maintenance", "Fixed O&M [EUR/kW/yr]", "36,5")
            after_comma = _headline(page)
            _type(page, "Losses and availability", "Availability, later years [%]", "150")
            after_bad = _headline(page)
            field_errors = page.locator('[data-testid="stSidebar"] [data-testid="stAlertContentError"]').all_inner_texts()
            stale = page.get_by_text("Stale: the figures below are those of the last valid inputs").count()
            charts_drawn = page.locator('[data-testid="stVegaLiteChart"], [data-testid="stAltairChart"]').count()
        finally:
            browser.close()
    assert after_comma == expected_headline(model.run(scn.with_overrides({"maintenance.fixed_per_kw_year": 36.5})))
    assert after_bad == after_comma
    assert [t.strip() for t in field_errors] == ["Availability, later years 150 %: at most 100 %"]
    assert stale == 1 and charts_drawn >= 2
