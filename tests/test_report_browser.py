"""report.html opened in a real headless browser (Debian chromium + chromedriver).

CI: apt-get install -y chromium chromium-driver
"""

from __future__ import annotations

import os

import pytest
from report_fixtures import demo_result

from floorfit.report import write_report

CHROMIUM = "/usr/bin/chromium"
CHROMEDRIVER = "/usr/bin/chromedriver"

pytestmark = [
    pytest.mark.browser,
    pytest.mark.skipif(not os.path.exists(CHROMIUM),
                       reason="needs Debian chromium: apt-get install -y chromium chromium-driver"),
]


@pytest.fixture(scope="module")
def browser(tmp_path_factory):
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    profile = tmp_path_factory.mktemp("chromium-profile")
    for arg in ("--headless", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                "--no-first-run", "--disable-background-networking", "--disable-component-update",
                "--disable-sync", f"--user-data-dir={profile}", "--window-size=1280,1000"):
        options.add_argument(arg)
    driver = webdriver.Chrome(service=Service(CHROMEDRIVER), options=options)
    yield driver
    driver.quit()


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    result = demo_result(hostile_label="<script>alert(1)</script>")
    folder = tmp_path_factory.mktemp("browser") / "report"
    return result, write_report(result, folder, formats=("html",), quiet=True)["html"]


def test_figures_render_and_table_is_complete(browser, report, tmp_path):
    result, path = report
    browser.get(path.as_uri())
    images = browser.execute_script(
        "return Array.from(document.images).map(i => [i.complete, i.naturalWidth, i.naturalHeight,"
        " i.getBoundingClientRect().width, i.getBoundingClientRect().height, i.alt]);")
    # plan, turning map, free headings, swept paths, vehicle, and one close-up sheet per finding
    assert len(images) == 5 + len(result.findings)
    for complete, nat_w, nat_h, box_w, box_h, alt in images:
        assert complete and nat_w > 100 and nat_h > 100, alt      # decoded, not broken
        assert box_w > 100 and box_h > 50, alt                    # laid out on the page
    # no figure wider than the page: nothing is cut off on a laptop screen
    overflow = browser.execute_script(
        "return document.documentElement.scrollWidth - document.documentElement.clientWidth;")
    assert overflow <= 0
    rows = browser.execute_script(
        "return document.querySelectorAll('table.findings tbody tr').length;")
    assert rows == len(result.findings)
    # the hostile label was shown as text, not run
    assert browser.execute_script("return document.querySelectorAll('script').length;") == 0
    assert "<script>alert(1)</script>" in browser.find_element("id", "findings").text
    shot = tmp_path / "report.png"
    assert browser.save_screenshot(str(shot)) and shot.stat().st_size > 10_000


def test_print_layout_keeps_figures_inside_the_page(browser, report):
    _, path = report
    browser.execute_cdp_cmd("Emulation.setEmulatedMedia", {"media": "print"})
    try:
        browser.set_window_size(794, 1123)                        # A4 at 96 dpi
        browser.get(path.as_uri())
        widths = browser.execute_script(
            "const w = document.documentElement.clientWidth;"
            "return Array.from(document.images).map(i => w - i.getBoundingClientRect().right);")
        assert widths and min(widths) >= 0
        nav = browser.execute_script(
            "return getComputedStyle(document.querySelector('nav.toc')).display;")
        assert nav == "none"
    finally:
        browser.execute_cdp_cmd("Emulation.setEmulatedMedia", {"media": ""})
        browser.set_window_size(1280, 1000)
