"""`floorfit check` with a train file (tractor + cart): off-tracking findings reach the report."""

import json

from test_articulated_site import TRAIN_TOML, _dxf_ring

from floorfit.cli import main


def test_check_with_train_file_reports_off_tracking(tmp_path):
    narrow = tmp_path / "narrow.dxf"
    _dxf_ring(narrow, 1.2)
    train = tmp_path / "train.toml"
    train.write_text(TRAIN_TOML, encoding="utf-8")
    out = tmp_path / "rep"
    code = main(["check", str(narrow), "--vehicle", str(train), "--station", "A=3.5,0.6,0",
                 "--station", "B=11.4,6,90", "--out", str(out), "--quiet", "--heading-step", "5"])
    assert code == 1
    data = json.loads((out / "findings.json").read_text())
    causes = {f["cause"] for f in data["findings"] if f["kind"] == "blocked"}
    assert "off-tracking" in causes
    reach = data["reachability"]
    names = reach["stations"]
    assert reach["matrix"][names.index("A")][names.index("B")] is False
