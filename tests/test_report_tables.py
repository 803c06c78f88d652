"""findings.json and findings.csv: stable bytes, documented fields, spreadsheet-safe cells."""

from __future__ import annotations

import csv
import io
import json
import math

import pytest
from report_fixtures import demo_result, demo_vehicle
from shapely.geometry import box

from floorfit.analysis.findings import CheckResult, Finding, Station
from floorfit.plan.model import Plan
from floorfit.report import write_report
from floorfit.report.tables import CSV_COLUMNS, REPORT_FORMAT, escape_csv_cell, findings_csv, findings_json, report_data

HOSTILE_LABEL = "<script>alert(1)</script>"
HOSTILE_CELL = "=cmd|' /C calc'!A0"


def _small_result(**finding_kw) -> CheckResult:
    """Two stations, one blocked door between them, in a 10 m × 6 m room (invented)."""
    plan = Plan.from_geometries([box(0, 0, 10, 6).exterior], [box(4, 0, 4.2, 2.5)],
                                origin=(100.0, 50.0), source="room.dxf")
    kw = dict(kind="blocked", x=104.1, y=53.0, summary="Door 0.70 m clear, needs 0.90 m.",
              label="D1", clear_width_m=0.7, needed_width_m=0.9, cuts_off=["B"], id="F-1")
    kw.update(finding_kw)
    return CheckResult(
        plan=plan, vehicle=demo_vehicle(), settings={"tolerance_m": 0.01, "heading_step_deg": 5.0},
        stations=[Station("A", 101.0, 51.0), Station("B", 108.0, 51.0, 90.0)],
        reachable={"A": {"B": False}, "B": {"A": False}}, findings=[Finding(**kw)],
        cuts={("A", "B"): ["F-1"], ("B", "A"): ["F-1"]})


def test_json_and_csv_are_byte_identical_across_runs(tmp_path):
    # Two independently built results of the same inputs, written to two folders.
    a = write_report(demo_result(), tmp_path / "a", formats=("json", "csv"), quiet=True)
    b = write_report(demo_result(), tmp_path / "b", formats=("json", "csv"), quiet=True)
    assert a["json"].read_bytes() == b["json"].read_bytes()
    assert a["csv"].read_bytes() == b["csv"].read_bytes()
    # and the JSON has no time stamp or other run-dependent field
    data = json.loads(a["json"].read_text("utf-8"))
    assert not {"time", "date", "created", "timestamp"} & set(data)


def test_json_fields_hold_the_result():
    result = demo_result()
    data = json.loads(findings_json(result, ["report.html", "findings.json"]))
    assert data["format"] == REPORT_FORMAT and data["format_version"] == 1
    assert data["complete"] is True and data["files"] == ["findings.json", "report.html"]
    assert data["verdict"] == {
        "passed": False, "finding_count": 5, "unreachable_pair_count": 6,
        # the station pairs as console and report count them: 6 ordered (from, to) = 3 pairs
        "station_pair_count": 6, "station_pairs_not_connected": 3,
        "findings_by_kind": {"blocked": 2, "no-turn": 1, "tight": 1, "maneuver": 1}}
    # report order: blocked first (engine order kept within a kind), numbered from 1
    assert [(f["number"], f["id"]) for f in data["findings"]] == [
        (1, "F-2"), (2, "F-1"), (3, "F-4"), (4, "F-3"), (5, "F-5")]
    assert data["findings"][0]["x"] == 262.0 and data["findings"][0]["y"] == 88.45
    reach = data["reachability"]
    assert reach["stations"] == ["Dock 1", "Line A", "Store", "QA lab"]
    assert reach["matrix"][0] == [None, True, True, False]
    assert {"from": "Dock 1", "to": "QA lab", "finding_ids": ["F-1"]} in reach["unreachable"]
    assert data["settings"]["tolerance_m"] == 0.02
    assert list(data["settings"]) == sorted(data["settings"])
    assert data["vehicle"]["outline"][0] == [0.6, -0.5]
    assert data["vehicle"]["width_m"] == 1.0 and data["plan"]["metres_per_unit"] == 0.001
    assert data["plan"]["origin"] == [250.0, 80.0]
    assert data["notes"] == result.notes


def test_json_settings_are_plain_values():
    import numpy as np
    result = _small_result()
    result.settings = {"headings": np.arange(0, 20, 5.0), "max_m": math.inf, "flag": np.bool_(True),
                       "step": np.float32(0.1), "pair": (1, 2), "zeta": 1 / 3}
    data = report_data(result)
    assert data["settings"] == {"headings": [0.0, 5.0, 10.0, 15.0], "max_m": "inf", "flag": True,
                                "step": 0.1, "pair": [1, 2], "zeta": 0.333333}
    json.dumps(data, allow_nan=False)  # strict JSON, no NaN/Infinity tokens


def test_json_floats_are_rounded_and_negative_zero_is_zero():
    result = _small_result(x=104.123456789, y=-0.0)
    f = report_data(result)["findings"][0]
    assert f["x"] == 104.1235 and math.copysign(1.0, f["y"]) == 1.0


def test_csv_escapes_formula_cells_and_keeps_text_otherwise():
    result = _small_result(label=HOSTILE_CELL, summary="+1 more; -2 less; @sum; plain ‘text’ ü",
                           cuts_off=["-B", "\tC"], id="@F")
    rows = list(csv.reader(io.StringIO(findings_csv(result).decode("utf-8-sig"), newline="")))
    assert tuple(rows[0]) == CSV_COLUMNS
    row = dict(zip(rows[0], rows[1], strict=True))
    # OWASP "CSV Injection": prefix cells starting with = + - @ tab CR with a single quote
    assert row["label"] == "'" + HOSTILE_CELL
    assert row["summary"] == "'+1 more; -2 less; @sum; plain ‘text’ ü"
    assert row["cuts_off"] == "'-B; \tC"
    assert row["id"] == "'@F"
    assert row["kind"] == "blocked" and row["x_m"] == "104.1" and row["clear_width_m"] == "0.7"


@pytest.mark.parametrize("text, expected", [
    ("=1+1", "'=1+1"), ("+1", "'+1"), ("-1", "'-1"), ("@A1", "'@A1"), ("\tx", "'\tx"),
    ("\rx", "'\rx"), ("a=1", "a=1"), ("", ""), ("Lager 3", "Lager 3"),
])
def test_escape_csv_cell(text, expected):
    assert escape_csv_cell(text) == expected


def test_csv_negative_coordinates_stay_numbers():
    result = _small_result(x=-12.5, y=-0.25)
    text = findings_csv(result).decode("utf-8-sig")
    row = dict(zip(CSV_COLUMNS, next(csv.reader(io.StringIO(text.splitlines()[1]))), strict=True))
    assert float(row["x_m"]) == -12.5 and float(row["y_m"]) == -0.25


def test_csv_is_utf8_with_bom_and_crlf():
    data = findings_csv(_small_result(label="Küche – Raum 1.03"))
    assert data.startswith(b"\xef\xbb\xbf")          # byte-order mark for spreadsheet programs
    assert data.count(b"\r\n") == 2                  # header + one row, RFC 4180 line ends
    assert "Küche – Raum 1.03" in data.decode("utf-8-sig")


def test_csv_one_row_per_finding_in_report_order():
    rows = list(csv.reader(io.StringIO(findings_csv(demo_result()).decode("utf-8-sig"))))
    assert [r[0] for r in rows[1:]] == ["1", "2", "3", "4", "5"]
    assert [r[2] for r in rows[1:]] == ["blocked", "blocked", "no-turn", "tight", "maneuver"]
    heading_col = CSV_COLUMNS.index("heading_ranges_deg")
    assert rows[3][heading_col] == "[-10, 10]; [170, 190]"
