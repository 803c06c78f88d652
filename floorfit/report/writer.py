"""The output folder of a site check, written so that a reader can trust what it finds.

Rule (also in docs/report.md): **a folder holds a complete report exactly when it holds
findings.json.** To keep that true:

1. Everything is rendered in memory first; a failure there writes nothing.
2. Then the old findings.json in the folder is deleted before anything else changes, and
   the other files of earlier floorfit runs after it, so files of two runs never mix.
3. Each file goes to a temporary file in the same folder (name starting
   ``.floorfit-partial-``), is flushed to disk, and is moved into place with
   :func:`os.replace` (atomic on one file system): no file is ever seen half-written.
4. findings.json is moved into place last. If anything fails before that, the files
   this run had already moved into place and all temporary files are removed, and the
   error is raised (an operating-system error as :class:`~floorfit.errors.InputError`).

findings.json is always written (it is the completion marker); ``formats`` chooses the
others. A folder that holds files floorfit did not write is refused unless
``force=True``; even then those other files are left alone (floorfit's own file names
are overwritten). The input drawing is never opened, and an output path that is the
input drawing is refused.
"""

from __future__ import annotations

import json
import os
import secrets
import zipfile
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from floorfit.errors import InputError
from floorfit.report.progress import Progress
from floorfit.report.tables import CSV_COLUMNS, REPORT_FORMAT

__all__ = ["OUTPUT_FILES", "COMPLETION_MARKER", "PAPER_SIZES", "write_report", "floorfit_wrote"]

#: Format name → file name in the output folder.
OUTPUT_FILES: dict[str, str] = {
    "html": "report.html",
    "json": "findings.json",
    "csv": "findings.csv",
    "dxf": "overlay.dxf",
    "pdf": "report.pdf",
}
#: Written only for checks on building models (IFC): the findings as BCF 3.0 topics.
MODEL_FILES: dict[str, str] = {"bcf": "findings.bcf"}
#: Paper sizes of report.pdf (landscape pages).
PAPER_SIZES = ("a4", "letter", "a3")
#: Written beside findings.csv when the check looked at fleet traffic (passing places, single-lane stretches).
TRAFFIC_FILE = "traffic.csv"
#: The file whose presence means "this folder holds a complete report".
COMPLETION_MARKER = OUTPUT_FILES["json"]

_TMP_PREFIX = ".floorfit-partial-"
_HTML_SIGNATURE = b'<meta name="generator" content="floorfit'
_DXF_SIGNATURE = b"floorfit_overlay"
_PDF_SIGNATURE = b"floorfit-report"        # the PDF's Keywords entry (document information, at the end)
_SNIFF_BYTES = 256 * 1024


def _head(path: Path, size: int = _SNIFF_BYTES) -> bytes:
    try:
        with open(path, "rb") as fh:
            return fh.read(size)
    except OSError:
        return b""


def floorfit_wrote(path: str | os.PathLike) -> bool:
    """True when ``path`` is an output file floorfit wrote (judged by its name and content)
    or a temporary file left by an interrupted floorfit run."""
    path = Path(path)
    name = path.name
    if name.startswith(_TMP_PREFIX):
        return path.is_file()
    if not path.is_file():
        return False
    if name == OUTPUT_FILES["html"]:
        return _HTML_SIGNATURE in _head(path, 4096)
    if name == OUTPUT_FILES["json"]:
        try:
            with open(path, encoding="utf-8") as fh:
                return json.load(fh).get("format") == REPORT_FORMAT
        except (OSError, ValueError, AttributeError):
            return False
    if name == OUTPUT_FILES["csv"]:
        first = _head(path, 4096).decode("utf-8-sig", errors="replace").splitlines()[:1]
        return first == [",".join(CSV_COLUMNS)]
    if name == OUTPUT_FILES["dxf"]:
        return _DXF_SIGNATURE in _head(path)
    if name == MODEL_FILES["bcf"]:
        from floorfit.report.bcf import BCF_SIGNATURE
        try:
            with zipfile.ZipFile(path) as zf:
                return zf.comment == BCF_SIGNATURE
        except (OSError, zipfile.BadZipFile):
            return False
    if name == TRAFFIC_FILE:
        from floorfit.report.tables import TRAFFIC_CSV_COLUMNS

        first = _head(path, 4096).decode("utf-8-sig", errors="replace").splitlines()[:1]
        return first == [",".join(TRAFFIC_CSV_COLUMNS)]
    if name == OUTPUT_FILES["pdf"]:
        return _head(path, 5) == b"%PDF-" and _PDF_SIGNATURE in _tail(path)
    return False


def _tail(path: Path, size: int = 64 * 1024) -> bytes:
    try:
        with open(path, "rb") as fh:
            fh.seek(max(path.stat().st_size - size, 0))
            return fh.read(size)
    except OSError:
        return b""


def _file_name(fmt: str) -> str:
    return OUTPUT_FILES.get(fmt) or MODEL_FILES[fmt]


def _check_formats(formats: Iterable[str], out_dir: Path) -> list[str]:
    chosen = []
    for fmt in formats:
        if fmt not in OUTPUT_FILES:
            raise InputError(f"unknown report format {fmt!r}; choose from "
                             f"{', '.join(OUTPUT_FILES)}", str(out_dir), "formats")
        if fmt not in chosen:
            chosen.append(fmt)
    if "json" not in chosen:
        chosen.append("json")                 # the completion marker is always written
    return [f for f in OUTPUT_FILES if f in chosen]


def _check_folder(out_dir: Path, force: bool) -> list[Path]:
    """floorfit's own files already in ``out_dir`` (to be replaced); refuse foreign ones."""
    if out_dir.exists() and not out_dir.is_dir():
        raise InputError("the output path exists and is not a folder", str(out_dir))
    if not out_dir.exists():
        return []
    ours, foreign = [], []
    for entry in sorted(out_dir.iterdir()):
        (ours if floorfit_wrote(entry) else foreign).append(entry)
    if foreign and not force:
        names = ", ".join(p.name for p in foreign[:3]) + (" ..." if len(foreign) > 3 else "")
        raise InputError(f"the output folder holds files floorfit did not write ({names}); "
                         "choose another folder or force overwriting", str(out_dir))
    return ours


def _check_not_input(targets: Iterable[Path], source: Any, out_dir: Path) -> None:
    src = Path(str(source))
    if not src.exists():
        return
    for target in targets:
        if target.exists() and os.path.samefile(target, src):
            raise InputError("an output file would overwrite the input drawing",
                             str(out_dir), target.name)


def check_output_folder(out_dir: str | os.PathLike, *, force: bool = False, sources: Iterable[Any] = ()) -> None:
    """Raise the :class:`~floorfit.errors.InputError` :func:`write_report` would raise for
    ``out_dir`` (not a folder, files floorfit did not write without ``force``, a report file
    that is one of the input files ``sources``), so a command can refuse before computing."""
    out_dir = Path(out_dir)
    _check_folder(out_dir, force)
    targets = [out_dir / name for name in OUTPUT_FILES.values()]
    for source in sources:
        _check_not_input(targets, source, out_dir)


def _write_temp(folder: Path, name: str, data: bytes) -> Path:
    """``data`` in a new temporary file in ``folder``, flushed to disk (permissions per umask)."""
    tmp = folder / f"{_TMP_PREFIX}{name}.{secrets.token_hex(6)}"
    fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    return tmp


def _sync_folder(folder: Path) -> None:
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def _render(result: Any, chosen: list[str], progress: Progress, project: Any = None,
            paper: str = "a4", workers: int | None = None) -> dict[str, bytes]:
    """The bytes of every chosen file. report.pdf is drawn in a second process while this one draws
    the others where ``workers`` (None: the usable cores) allows it (:mod:`floorfit.forking`);
    the bytes are the same either way."""
    # Imported here so that `import floorfit.report` stays light.
    from floorfit.report.figures import draw_report_figures  # noqa: F401  (loaded before the stages start)
    from floorfit.report.html import render_html  # noqa: F401
    from floorfit.report.overlay import overlay_dxf  # noqa: F401
    from floorfit.report.tables import findings_json

    contents: dict[str, bytes] = {}
    sheets = obstacles = layout = None
    pending = None
    if "html" in chosen or "pdf" in chosen:
        from floorfit.report.bounding_entities import sheet_obstacles
        from floorfit.report.pdf import page_layout
        from floorfit.report.sheets import build_sheets

        layout = page_layout(paper)
        obstacles = sheet_obstacles(result)
        sheets = build_sheets(result, viewport_mm=layout.viewport, obstacles=obstacles)
    try:
        if "pdf" in chosen:
            from floorfit.forking import start
            from floorfit.report.pdf import render_pdf

            pending = start(render_pdf, result, workers=workers, project=project, paper=paper, sheets=sheets,
                            obstacles=obstacles)
        if "html" in chosen:
            contents["html"] = _html(result, progress, sheets, layout, obstacles)
        if pending is not None and not pending.apart:
            progress.stage("drawing report.pdf")        # drawn here, in its usual place
            contents["pdf"] = pending.result()
        contents.update(_tables_and_overlay(result, chosen, progress))
        if pending is not None and "pdf" not in contents:
            progress.stage("drawing report.pdf (second process)")
            contents["pdf"] = pending.result()
    finally:
        if pending is not None:
            pending.cancel()
    progress.stage("writing findings.json")
    contents["json"] = findings_json(result, [_file_name(f) for f in chosen]
                                     + ([TRAFFIC_FILE] if "traffic" in contents else []))
    return contents


def _html(result: Any, progress: Progress, sheets: Any, layout: Any, obstacles: Any) -> bytes:
    """report.html: the figures, the sheets' close-ups, the page."""
    from floorfit.report.figures import draw_report_figures
    from floorfit.report.html import render_html
    from floorfit.report.sheets_html import closeup_images

    progress.stage("drawing figures")
    images = draw_report_figures(result)
    images += closeup_images(result, sheets, layout.viewport, obstacles)
    progress.stage("composing report.html")
    return render_html(result, images, sheets=sheets, sheet_viewport_mm=layout.viewport).encode("utf-8")


def _tables_and_overlay(result: Any, chosen: list[str], progress: Progress) -> dict[str, bytes]:
    """findings.csv (and traffic.csv), overlay.dxf and findings.bcf, as chosen."""
    out: dict[str, bytes] = {}
    if "csv" in chosen:
        from floorfit.report.tables import findings_csv

        progress.stage("tabulating findings.csv")
        out["csv"] = findings_csv(result)
        if getattr(result, "traffic", None) is not None:
            from floorfit.report.tables import traffic_csv

            out["traffic"] = traffic_csv(result)
    if "dxf" in chosen:
        from floorfit.report.overlay import overlay_dxf

        progress.stage("drawing overlay.dxf")
        out["dxf"] = overlay_dxf(result)
    if "bcf" in chosen:
        from floorfit.report.bcf import findings_bcf

        progress.stage("writing findings.bcf")
        out["bcf"] = findings_bcf(result)
    return out


def write_report(result: Any, out_dir: str | os.PathLike, *, force: bool = False,
                 formats: Iterable[str] = ("html", "json", "csv", "dxf", "pdf"),
                 quiet: bool = False, project: Any = None, paper: str = "a4",
                 workers: int | None = None) -> dict[str, Path]:
    """Write the report files of ``result`` (a :class:`~floorfit.analysis.findings.CheckResult`)
    into ``out_dir`` and return ``{format: path}`` of the files written.

    Parameters
    ----------
    result : CheckResult
        A finished site check (see docs/report.md for the attributes used).
    out_dir : path
        The output folder; created if missing. A folder holding files floorfit did not
        write raises :class:`~floorfit.errors.InputError` unless ``force``.
    force : bool
        Write into a folder that holds other files (they are left alone).
    formats : iterable of str
        Any of ``"html"``, ``"json"``, ``"csv"``, ``"dxf"``, ``"pdf"``; ``"json"`` is always added.
    quiet : bool
        No progress output on standard error.
    project : ProjectInfo or mapping, optional
        Project fields for the PDF's cover and title blocks (:mod:`floorfit.report.project`).
    paper : str
        ``"a4"`` (default), ``"letter"`` or ``"a3"``: the PDF's paper, printed landscape.
    workers : int, optional
        Processes for drawing: with 2 or more (default: the usable cores) report.pdf is drawn in a
        second process while this one draws the other files; 1 draws everything here. The files
        are the same either way.
    """
    out_dir = Path(out_dir)
    chosen = _check_formats((formats,) if isinstance(formats, str) else formats, out_dir)
    if str(paper).lower() not in PAPER_SIZES:
        raise InputError(f"unknown paper {paper!r}; choose from {', '.join(PAPER_SIZES)}", str(out_dir), "paper")
    paper = str(paper).lower()
    from floorfit.report.bcf import is_model_plan
    if is_model_plan(result.plan) and "bcf" not in chosen:     # findings back into the model viewer
        chosen.append("bcf")
    old_ours = _check_folder(out_dir, force)
    targets = {fmt: out_dir / _file_name(fmt) for fmt in chosen}
    if "csv" in chosen and getattr(result, "traffic", None) is not None:
        targets["traffic"] = out_dir / TRAFFIC_FILE      # fleet traffic table, beside findings.csv
    _check_not_input(targets.values(), result.plan.source, out_dir)

    progress = Progress(total_stages=len(chosen) + (1 if "html" in chosen else 0) + 1, quiet=quiet)
    from floorfit.report.project import ProjectInfo

    if project is not None and not isinstance(project, ProjectInfo):
        project = ProjectInfo.from_mapping(project)
    contents = _render(result, chosen, progress, project, paper, workers)

    progress.stage(f"saving to {out_dir}")
    temps: dict[str, Path] = {}
    placed: list[Path] = []
    order = [f for f in targets if f != "json"] + ["json"]
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
        (out_dir / COMPLETION_MARKER).unlink(missing_ok=True)   # folder now marked incomplete
        for path in old_ours:                                   # earlier runs' files go
            path.unlink(missing_ok=True)
        for fmt in order:
            temps[fmt] = _write_temp(out_dir, targets[fmt].name, contents[fmt])
        for fmt in order:
            os.replace(temps[fmt], targets[fmt])
            del temps[fmt]
            placed.append(targets[fmt])
    except BaseException as exc:
        for tmp in temps.values():
            tmp.unlink(missing_ok=True)
        for path in placed:
            path.unlink(missing_ok=True)
        if isinstance(exc, OSError):
            reason = exc.strerror or str(exc)
            raise InputError(f"cannot write the report: {reason}", str(out_dir)) from exc
        raise
    _sync_folder(out_dir)
    progress.done(f"report written to {out_dir}")
    return dict(targets)
