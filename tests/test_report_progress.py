"""Progress on standard error: one updating line on a terminal, plain lines otherwise."""

from __future__ import annotations

import io
import re

from floorfit.report.progress import Progress


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_terminal_gets_one_updating_line():
    out = _Terminal()
    p = Progress(total_stages=2, stream=out)
    p.stage("building slices")
    p.update(72, 72)
    p.stage("writing")
    p.done()
    text = out.getvalue()
    assert "\n" not in text                       # never scrolls
    assert "\rfloorfit: [1/2] building slices" in text and "building slices 72/72 (" in text
    assert "\rfloorfit: [2/2] writing" in text
    assert text.endswith("\r")                    # line cleared at the end


def test_log_file_gets_plain_stage_lines():
    out = io.StringIO()
    p = Progress(total_stages=2, stream=out)
    p.stage("building slices")
    p.update(10, 72)                              # counts are for terminals only
    p.stage("writing")
    p.done("done")
    lines = out.getvalue().splitlines()
    # each stage line carries the time elapsed since the start
    assert re.fullmatch(r"floorfit: \[1/2\] building slices \(\d+\.\d s\)", lines[0])
    assert re.fullmatch(r"floorfit: \[2/2\] writing \(\d+\.\d s\)", lines[1])
    assert lines[2].startswith("floorfit: done (") and "\r" not in out.getvalue()


def test_quiet_prints_nothing():
    for out in (io.StringIO(), _Terminal()):
        p = Progress(total_stages=1, stream=out, quiet=True)
        p.stage("x")
        p.update(1, 2)
        p.done("finished")
        assert out.getvalue() == ""


def test_a_progress_is_a_stage_callback_with_counts():
    out = io.StringIO()
    p = Progress(stream=out)
    p("roadmap")                                  # what run_check's progress= callback does
    assert out.getvalue().startswith("floorfit: roadmap (") and callable(p.update)
    assert p.elapsed_s >= 0.0
