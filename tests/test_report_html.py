"""report.html: self-contained, escaped, complete; figures stable."""

from __future__ import annotations

import base64
import re

import numpy as np
import pytest
import shapely
from report_fixtures import demo_result, demo_vehicle
from shapely.geometry import box

from floorfit.analysis.findings import CheckResult, Station
from floorfit.plan.model import Plan
from floorfit.report.figures import (
    FigureImage,
    choose_format,
    draw_report_figures,
    heading_count_figure,
    plan_figure,
    render_figure,
    turnability_figure,
    vehicle_figure,
)
from floorfit.report.html import render_html

HOSTILE = "<script>alert(1)</script>"


@pytest.fixture(scope="module")
def hostile_page():
    result = demo_result(hostile_label=HOSTILE, source='plans/<b onmouseover="x()">.dxf')
    evil = "<img src=x onerror=alert(2)>"
    rename = lambda n: evil if n == "Dock 1" else n  # noqa: E731
    result.stations[0] = Station(evil, result.stations[0].x, result.stations[0].y)
    result.reachable = {rename(a): {rename(b): v for b, v in row.items()}
                        for a, row in result.reachable.items()}
    result.cuts = {(rename(a), rename(b)): ids for (a, b), ids in result.cuts.items()}
    result.notes.append("layer <A-WALL> & \"quotes\"")
    result.vehicle.name = "Cart <i>XL</i>"
    return result, render_html(result, draw_report_figures(result))


def test_text_from_files_is_escaped(hostile_page):
    _, page = hostile_page
    assert HOSTILE not in page and "&lt;script&gt;alert(1)&lt;/script&gt;" in page
    assert "<img src=x" not in page and "&lt;img src=x onerror=alert(2)&gt;" in page
    assert "<b onmouseover" not in page and "<i>XL</i>" not in page
    assert "layer &lt;A-WALL&gt; &amp; &quot;quotes&quot;" in page
    # the only tags are ours: no script element at all
    assert not re.search(r"<script", page, re.I)


def test_page_is_self_contained(hostile_page):
    _, page = hostile_page
    assert not re.search(r"""(src|href)\s*=\s*["']?(https?:|//)""", page, re.I)
    assert "@import" not in page and not re.search(r"url\(\s*['\"]?https?:", page)
    sources = re.findall(r'<img src="([^"]+)"', page)
    assert sources and all(s.startswith(("data:image/svg+xml;base64,", "data:image/png;base64,"))
                           for s in sources)
    # embedded SVG figures carry no external references either
    for s in sources:
        svg = base64.b64decode(s.split(",", 1)[1])
        assert b"http://" not in svg.replace(b"http://www.w3.org", b"") or b"xlink:href=\"http" not in svg
        assert b"<script" not in svg


def test_page_has_every_section_in_order(hostile_page):
    result, page = hostile_page
    ids = re.findall(r'<section[^>]* id="([a-z]+)"', page)
    assert ids == ["verdict", "settings", "plan", "turn", "routes", "findings", "reach", "notes",
                   "definitions", "cautions"]
    assert "Does not pass" in page
    # the findings table has one row per finding, numbered as the markers
    rows = re.findall(r'<tr id="finding-(\d+)">', page)
    assert rows == [str(i) for i in range(1, len(result.findings) + 1)]
    # the reachability matrix: one row per station, ✗ for the cut-off station
    reach = page[page.index('id="reach"'):page.index('id="notes"')]
    assert reach.count('<th class="row">') == 5          # corner cell + 4 stations
    assert reach.count('class="no"') == 6 and reach.count('class="yes"') == 6
    for word in ("not a risk assessment", "ANSI/ITSDF B56.5 (2004 text), §4.7.4",
                 "2010 ADA Standards for Accessible Design, §403.5.1", "references, not law",
                 "within 20 mm", "every 5°"):
        assert word in page


def test_passing_result_says_so_and_hides_empty_parts():
    plan = Plan.from_geometries([box(0, 0, 10, 6).exterior], origin=(5.0, 5.0), source="a.dxf")
    result = CheckResult(plan=plan, vehicle=demo_vehicle(), settings={},
                         stations=[Station("A", 6.0, 6.0), Station("B", 14.0, 10.0)],
                         reachable={"A": {"B": True}, "B": {"A": True}}, findings=[])
    page = render_html(result, draw_report_figures(result))
    assert '<section class="verdict pass"' in page and "Passes" in page
    assert "All 2 stations can be reached" in page
    assert "No findings" in page and "did not produce a turning map" in page
    assert 'id="routes"' not in page and 'id="notes"' not in page
    assert "a tolerance not stated" in page          # no guessing when a setting is missing


def test_svg_figures_are_stable_and_png_for_heavy_plans():
    result = demo_result()
    fig_a, _ = plan_figure(result)
    fig_b, _ = plan_figure(demo_result())
    assert render_figure(fig_a) == render_figure(fig_b)
    assert choose_format(result) == "svg"
    # a plan with more than 150 000 coordinates is drawn as PNG
    heavy = demo_result()
    t = np.linspace(0, 2 * np.pi, 160_001)[:-1]
    heavy.turnability["fits"] = shapely.Polygon(np.column_stack([5 * np.cos(t), 5 * np.sin(t)]))
    assert choose_format(heavy) == "png"
    png = render_figure(vehicle_figure(heavy.vehicle), "png")
    assert png.startswith(b"\x89PNG\r\n\x1a\n")


def test_optional_figures_appear_only_with_their_data():
    result = demo_result(routes=False)
    keys = [img.key for img in draw_report_figures(result)]
    assert keys == ["fig-plan", "fig-turn", "fig-headings", "fig-vehicle"]
    result.turnability = {}
    assert turnability_figure(result) is None and heading_count_figure(result) is None
    images = draw_report_figures(result)
    assert [img.key for img in images] == ["fig-plan", "fig-vehicle"]
    assert all(isinstance(img, FigureImage) and img.data for img in images)


def test_many_labels_are_thinned_and_said_so():
    from floorfit.plan.model import Label
    result = demo_result(routes=False)
    result.turnability = {}
    result.plan.labels = [Label(f"R{i}", 1 + (i % 25), 1 + (i // 25) % 16) for i in range(450)]
    _, hidden = plan_figure(result)
    assert hidden == 50
    plan_img = draw_report_figures(result, "svg")[0]
    assert "50 of 450 drawing labels are not shown" in plan_img.caption


def test_dollar_signs_in_drawing_text_are_not_read_as_formulas():
    # matplotlib reads text between $ signs as mathtext; broken math would stop the report
    result = demo_result(hostile_label=r"Cost $\frac{ 5 $", routes=False)
    result.turnability = {}
    result.stations[1] = Station("$$", result.stations[1].x, result.stations[1].y)
    fig, _ = plan_figure(result)
    assert render_figure(fig).startswith(b"<?xml")


def test_settings_table_lists_every_setting_sorted():
    import numpy as np
    result = demo_result(routes=False)
    result.turnability = {}
    result.settings = {"zeta_m": np.float32(0.25), "alpha": [1.5, 2], "mid": {"b": 1, "a": None},
                       "required_clearance_m": "see site rules"}
    page = render_html(result, [])
    table = page[page.index("<h3>Check settings</h3>"):page.index("<h3>Vehicle</h3>")]
    keys = re.findall(r"<tr><th>([^<]+)</th><td>([^<]*)</td></tr>", table)
    assert keys == [("alpha", "1.5, 2"), ("mid", "a: —; b: 1"),
                    ("required_clearance_m", "see site rules"), ("zeta_m", "0.25")]
    assert "Clearance asked for: <strong>see site rules</strong>" in page
