"""One numbering (issue 16): the console's F-numbers, findings.csv and the report's table and plan
markers, opened in a real headless browser (Debian chromium + chromedriver), name the same findings.

CI: apt-get install -y chromium chromium-driver
"""

from __future__ import annotations

import csv
import io
import os
import re

import ezdxf
import pytest

from floorfit.cli import main

CHROMIUM = "/usr/bin/chromium"
CHROMEDRIVER = "/usr/bin/chromedriver"



def _site_dxf(path) -> None:
    """An invented 20 × 6 m hall in metres: a 0.70 m door at x = 6 (blocked for a cart needing
    0.72 m), a 1.00 m door at x = 13 (passable, tight against 0.45 m) and a 0.9 m dead-end aisle
    going up from the middle room (no turn)."""
    doc = ezdxf.new("R2013", setup=False)
    doc.header["$INSUNITS"] = 6
    msp = doc.modelspace()
    outline = [(0, 0), (20, 0), (20, 6), (9.95, 6), (9.95, 12), (9.05, 12), (9.05, 6), (0, 6)]
    msp.add_lwpolyline(outline, close=True, dxfattribs={"layer": "A-WALL"})
    for x0, y0, x1, y1 in [(6, 0, 6.2, 2.65), (6, 3.35, 6.2, 6), (13, 0, 13.2, 2.5), (13, 3.5, 13.2, 6)]:
        msp.add_lwpolyline([(x0, y0), (x1, y0), (x1, y1), (x0, y1)], close=True, dxfattribs={"layer": "A-WALL"})
    doc.saveas(path)


@pytest.fixture(scope="module")
def checked(tmp_path_factory):
    folder = tmp_path_factory.mktemp("numbers")
    _site_dxf(folder / "hall.dxf")
    (folder / "cart.toml").write_text('name = "cart"\n[footprint]\nwidth = 0.62\nlength = 0.9\nmargin = 0.05\n'
                                      '[motion]\nmode = "differential"\n')
    # ANSI/ITSDF B56.5 (2004 text) §4.7.4: 450 mm between obstructions and the vehicle
    (folder / "site.toml").write_text('[stations]\nA = { x = 3.0, y = 3.0 }\nB = { x = 9.5, y = 3.0 }\n'
                                      'C = { x = 17.0, y = 3.0 }\n[clearance]\nreference = "b56.5"\n'
                                      '[analysis]\nheading_step = 5.0\n')
    return folder


@pytest.fixture(scope="module")
def console_and_csv(checked):
    """The check run once from the command line: its console F-numbers and findings.csv rows."""
    out = checked / "report"
    import contextlib

    text = io.StringIO()
    with contextlib.redirect_stdout(text):
        code = main(["check", str(checked / "hall.dxf"), "--vehicle", str(checked / "cart.toml"), "--site",
                     str(checked / "site.toml"), "--out", str(out), "--quiet", "--force"])
    assert code == 1
    console = {int(m.group(1)): (m.group(2), round(float(m.group(3)), 2), round(float(m.group(4)), 2))
               for m in re.finditer(r"^  F(\d+) (\S+)\s+at \(([-\d.]+), ([-\d.]+)\) m", text.getvalue(), re.M)}
    rows = list(csv.DictReader(io.StringIO((out / "findings.csv").read_text(encoding="utf-8-sig"))))
    return out, console, rows


def test_console_and_csv_number_the_same_findings(console_and_csv):
    _, console, rows = console_and_csv
    kinds = {k for k, _, _ in console.values()}
    assert {"blocked", "tight", "no-turn"} <= kinds, console
    from_csv = {int(r["number"]): (r["kind"], round(float(r["x_m"]), 2), round(float(r["y_m"]), 2)) for r in rows}
    assert all(r["id"] == f"F{r['number']}" for r in rows)
    assert from_csv == console


@pytest.mark.browser
@pytest.mark.skipif(not os.path.exists(CHROMIUM),
                    reason="needs Debian chromium: apt-get install -y chromium chromium-driver")
def test_report_in_the_browser_shows_the_console_numbers(console_and_csv, tmp_path):
    out, console, _ = console_and_csv

    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    for arg in ("--headless", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage", "--no-first-run",
                "--disable-background-networking", "--disable-component-update", "--disable-sync",
                f"--user-data-dir={tmp_path / 'profile'}", "--window-size=1280,1000"):
        options.add_argument(arg)
    driver = webdriver.Chrome(service=Service(CHROMEDRIVER), options=options)
    try:
        driver.get((out / "report.html").as_uri())
        table = driver.execute_script(
            "return Array.from(document.querySelectorAll('table.findings tbody tr')).map(r =>"
            " Array.from(r.cells).map(c => c.innerText.trim()));")
        shot = tmp_path / "report.png"
        assert driver.save_screenshot(str(shot)) and shot.stat().st_size > 10_000
    finally:
        driver.quit()
    seen = {}
    for cells in table:
        number, fid, kind = int(re.sub(r"\D", "", cells[0])), cells[1], cells[2].splitlines()[0].lower()
        assert fid == f"F{number}"
        seen[number] = (kind, round(float(cells[4]), 2), round(float(cells[5]), 2))
    assert sorted(seen) == sorted(console)
    for n, (kind, x, y) in console.items():
        assert seen[n][1:] == (x, y)
        assert seen[n][0] == {"blocked": "blocked", "no-turn": "no turn", "tight": "tight"}.get(kind, kind)
