"""The output folder: atomic files, completion marker, refusing foreign folders."""

from __future__ import annotations

import hashlib
import json
import os

import pytest
from report_fixtures import demo_result

from floorfit.errors import InputError
from floorfit.report import COMPLETION_MARKER, OUTPUT_FILES, write_report
from floorfit.report import writer as writer_module

ALL = ("html", "json", "csv", "dxf")


@pytest.fixture(scope="module")
def result():
    return demo_result()


def _names(folder):
    return sorted(p.name for p in folder.iterdir())


def test_writes_all_four_files_and_json_lists_them(tmp_path, result):
    paths = write_report(result, tmp_path / "out", quiet=True)
    assert {k: p.name for k, p in paths.items()} == OUTPUT_FILES
    assert _names(tmp_path / "out") == sorted(OUTPUT_FILES.values())
    data = json.loads(paths["json"].read_text("utf-8"))
    assert data["complete"] is True and data["files"] == sorted(OUTPUT_FILES.values())


def test_json_is_always_written_as_the_marker(tmp_path, result):
    paths = write_report(result, tmp_path / "out", formats=("csv",), quiet=True)
    assert set(paths) == {"csv", "json"}
    assert _names(tmp_path / "out") == ["findings.csv", "findings.json"]
    paths = write_report(result, tmp_path / "one", formats="csv", quiet=True)   # a single name
    assert set(paths) == {"csv", "json"}


def test_unknown_format_is_refused(tmp_path, result):
    with pytest.raises(InputError, match="unknown report format 'docx'"):
        write_report(result, tmp_path / "out", formats=("docx",), quiet=True)
    assert not (tmp_path / "out").exists()


def test_refuses_folder_with_foreign_files_unless_forced(tmp_path, result):
    out = tmp_path / "out"
    out.mkdir()
    (out / "notes.txt").write_text("mine")
    (out / "report.html").write_text("<html>my own page</html>")   # our name, not our file
    with pytest.raises(InputError) as err:
        write_report(result, out, formats=("json", "csv"), quiet=True)
    message = str(err.value)
    assert "\n" not in message and str(out) in message and "notes.txt" in message
    assert (out / "report.html").read_text() == "<html>my own page</html>"
    assert _names(out) == ["notes.txt", "report.html"]

    write_report(result, out, formats=("json", "csv"), force=True, quiet=True)
    assert (out / "notes.txt").read_text() == "mine"              # force never deletes others
    assert (out / COMPLETION_MARKER).exists()


def test_rerun_into_own_folder_replaces_and_drops_stale_outputs(tmp_path, result):
    out = tmp_path / "out"
    write_report(result, out, quiet=True)
    write_report(result, out, formats=("json", "csv"), quiet=True)   # no force needed
    assert _names(out) == ["findings.csv", "findings.json"]          # old html/dxf removed


def test_output_path_that_is_a_file_is_refused(tmp_path, result):
    target = tmp_path / "out"
    target.write_text("x")
    with pytest.raises(InputError, match="not a folder"):
        write_report(result, target, quiet=True)


def test_input_drawing_is_never_overwritten(tmp_path, result):
    drawing = tmp_path / "overlay.dxf"
    drawing.write_bytes(b"0\nSECTION\n2\nENTITIES\n0\nENDSEC\n0\nEOF\n")
    digest = hashlib.sha256(drawing.read_bytes()).hexdigest()
    result = demo_result(source=str(drawing))
    with pytest.raises(InputError):                      # foreign file in the folder
        write_report(result, tmp_path, quiet=True)
    with pytest.raises(InputError, match="input drawing"):  # even when forced
        write_report(result, tmp_path, force=True, quiet=True)
    assert hashlib.sha256(drawing.read_bytes()).hexdigest() == digest
    # beside the drawing, in another folder, all is well and the drawing is untouched
    write_report(result, tmp_path / "report", quiet=True)
    assert hashlib.sha256(drawing.read_bytes()).hexdigest() == digest


def test_interrupted_move_leaves_no_complete_looking_report(tmp_path, result, monkeypatch):
    out = tmp_path / "out"
    write_report(result, out, quiet=True)                # an earlier complete report
    real_replace = os.replace
    calls = []

    def failing_replace(src, dst):
        calls.append(dst)
        if len(calls) == 2:                              # report.html is already in place
            raise OSError(28, "No space left on device")
        return real_replace(src, dst)

    monkeypatch.setattr(writer_module.os, "replace", failing_replace)
    with pytest.raises(InputError, match="No space left on device"):
        write_report(result, out, quiet=True)
    # neither the new nor the old marker, no report.html, no temporary files
    assert _names(out) == []


def test_interrupted_figure_drawing_leaves_old_report_intact(tmp_path, result, monkeypatch):
    out = tmp_path / "out"
    write_report(result, out, formats=("json", "csv"), quiet=True)
    before = {p.name: p.read_bytes() for p in out.iterdir()}

    def broken(*args, **kwargs):
        raise KeyboardInterrupt                          # user pressed Ctrl-C while drawing

    import floorfit.report.figures as figures
    monkeypatch.setattr(figures, "draw_report_figures", broken)
    with pytest.raises(KeyboardInterrupt):
        write_report(result, out, quiet=True)
    # rendering happens before any file is touched: the earlier report is still whole
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before


def test_interrupted_temp_write_removes_temporaries(tmp_path, result, monkeypatch):
    out = tmp_path / "out"
    real = writer_module._write_temp
    count = []

    def flaky(folder, name, data):
        count.append(name)
        if len(count) == 3:
            raise KeyboardInterrupt
        return real(folder, name, data)

    monkeypatch.setattr(writer_module, "_write_temp", flaky)
    with pytest.raises(KeyboardInterrupt):
        write_report(result, out, quiet=True)
    assert _names(out) == []


def test_leftover_temporary_files_count_as_ours(tmp_path, result):
    out = tmp_path / "out"
    out.mkdir()
    (out / ".floorfit-partial-report.html.0123456789ab").write_bytes(b"<!DOCTYPE html><ht")
    write_report(result, out, formats=("json",), quiet=True)
    assert _names(out) == ["findings.json"]


def test_files_written_keep_normal_permissions(tmp_path, result):
    old = os.umask(0o022)
    try:
        paths = write_report(result, tmp_path / "out", formats=("json",), quiet=True)
    finally:
        os.umask(old)
    assert paths["json"].stat().st_mode & 0o777 == 0o644


def test_progress_lines_when_not_quiet(tmp_path, result, capsys):
    write_report(result, tmp_path / "out", formats=("json", "csv"), quiet=False)
    err = capsys.readouterr().err
    assert "floorfit: [1/3] tabulating findings.csv" in err and "report written to" in err
    write_report(result, tmp_path / "out", formats=("json", "csv"), quiet=True)
    assert capsys.readouterr().err == ""
