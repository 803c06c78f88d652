"""Turning a finished site check into files a facility planner reads, shares and uses in CAD.

``write_report(result, out_dir)`` writes, into one folder:

- ``report.html``: a self-contained page (figures embedded, no network) for reading and print;
- ``findings.json``: the full result, stable schema (docs/report.md), written last as the
  completion marker;
- ``findings.csv``: one row per finding, safe to open in a spreadsheet;
- ``overlay.dxf``: findings and stations in the drawing's own units and frame, to attach
  over the original drawing.

The renderers are importable on their own: :func:`findings_json`, :func:`findings_csv`,
:func:`render_html` with :func:`draw_report_figures`, :func:`overlay_dxf`.

Stage 7 of the pipeline. May import: :mod:`floorfit.articulated`, :mod:`floorfit.analysis` and
everything below them; never :mod:`floorfit.fleet` or :mod:`floorfit.commands`.
"""

from __future__ import annotations

from floorfit.report.progress import Progress
from floorfit.report.tables import REPORT_FORMAT, REPORT_FORMAT_VERSION, findings_csv, findings_json, report_data
from floorfit.report.writer import COMPLETION_MARKER, OUTPUT_FILES, write_report

__all__ = [
    "write_report", "OUTPUT_FILES", "COMPLETION_MARKER", "REPORT_FORMAT", "REPORT_FORMAT_VERSION",
    "report_data", "findings_json", "findings_csv", "render_html", "draw_report_figures",
    "overlay_dxf", "Progress",
]


def __getattr__(name: str):
    # matplotlib and ezdxf load only when a figure or the overlay is actually needed.
    if name == "render_html":
        from floorfit.report.html import render_html
        return render_html
    if name == "draw_report_figures":
        from floorfit.report.figures import draw_report_figures
        return draw_report_figures
    if name == "overlay_dxf":
        from floorfit.report.overlay import overlay_dxf
        return overlay_dxf
    raise AttributeError(f"module 'floorfit.report' has no attribute {name!r}")
