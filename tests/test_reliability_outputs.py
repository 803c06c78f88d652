"""Outputs never lie: killed or interrupted runs leave no complete-looking report; reruns are identical."""

import json
import os
import signal
import subprocess
import sys
import time

import pytest

from floorfit.demo import write_demo_site


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    return write_demo_site(tmp_path_factory.mktemp("demo") / "plans")


def _cmd(demo, out):
    return [sys.executable, "-m", "floorfit", "check", str(demo["plan"]), "--vehicle", str(demo["vehicle"]),
            "--site", str(demo["site"]), "--out", str(out), "--quiet", "--heading-step", "5"]


def _looks_complete_only_if_complete(out):
    """findings.json marks completion: when it exists, it parses and the other files are all there."""
    marker = out / "findings.json"
    if not marker.exists():
        return False
    data = json.loads(marker.read_text())
    assert data["findings"] is not None
    for name in ("report.html", "findings.csv", "overlay.dxf"):
        assert (out / name).exists() and (out / name).stat().st_size > 0
    return True


@pytest.mark.parametrize("delay", [1.0, 4.0])
def test_killed_run_leaves_no_complete_looking_report(demo, tmp_path, delay):
    out = tmp_path / "rep"
    proc = subprocess.Popen(_cmd(demo, out), stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    time.sleep(delay)
    proc.kill()                      # SIGKILL: no chance to clean up
    proc.wait()
    complete = _looks_complete_only_if_complete(out)
    if not complete and out.exists():
        # whatever is left is either temporary (.floorfit-partial-*) or not a report
        assert not (out / "findings.json").exists()


def test_ctrl_c_exits_promptly_and_cleanly(demo, tmp_path):
    out = tmp_path / "rep"
    proc = subprocess.Popen(_cmd(demo, out), stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    time.sleep(1.5)
    t0 = time.monotonic()
    proc.send_signal(signal.SIGINT)
    stdout, stderr = proc.communicate(timeout=30)
    elapsed = time.monotonic() - t0
    if proc.returncode == 130:
        assert stderr.strip().splitlines()[-1] == "floorfit check: interrupted"
        assert "Traceback" not in stderr
        assert elapsed < 10
        assert not (out / "findings.json").exists()
    else:                             # the run had already finished before the signal arrived
        assert proc.returncode in (0, 1)
        assert _looks_complete_only_if_complete(out)


def test_same_inputs_give_byte_identical_json_and_csv(demo, tmp_path):
    a, b = tmp_path / "a", tmp_path / "b"
    for out in (a, b):
        assert subprocess.run(_cmd(demo, out), capture_output=True).returncode == 1
    assert (a / "findings.json").read_bytes() == (b / "findings.json").read_bytes()
    assert (a / "findings.csv").read_bytes() == (b / "findings.csv").read_bytes()


def test_input_drawing_is_not_modified(demo, tmp_path):
    before = demo["plan"].read_bytes()
    mtime = os.stat(demo["plan"]).st_mtime_ns
    subprocess.run(_cmd(demo, tmp_path / "rep"), capture_output=True)
    assert demo["plan"].read_bytes() == before and os.stat(demo["plan"]).st_mtime_ns == mtime
