"""Project and revision fields of a report, and the facts every sheet's title block carries.

The ``[project]`` table of a site file (read by :mod:`floorfit.plan.site`) gives name,
number, client, revision, prepared_by and date; ``floorfit check --revision`` overrides the
revision. The title block adds what makes a sheet traceable: the drawing and vehicle file
names with the first 12 hex digits of their SHA-256, the floorfit version and the settings
that change answers (heading step, clearance, tolerance).

No date is ever taken from the clock: the date is the one the user gives, else the day of
``SOURCE_DATE_EPOCH`` when that is set (reproducible builds), else left blank. The same
inputs therefore always give the same report.
"""

from __future__ import annotations

import datetime
import hashlib
import os
from collections.abc import Mapping
from dataclasses import dataclass, fields, replace
from pathlib import Path
from typing import Any

from floorfit import __version__

__all__ = ["ProjectInfo", "file_sha12", "source_date", "TitleBlock", "title_block", "settings_text",
           "PROJECT_FIELDS"]

#: (attribute, label) of the project fields, in title-block order.
PROJECT_FIELDS: tuple[tuple[str, str], ...] = (
    ("name", "project"), ("number", "project no."), ("client", "client"),
    ("revision", "revision"), ("prepared_by", "prepared by"), ("date", "date"),
)


@dataclass(frozen=True)
class ProjectInfo:
    """The project fields of a report; every field is text, blank when not given."""

    name: str = ""
    number: str = ""
    client: str = ""
    revision: str = ""
    prepared_by: str = ""
    date: str = ""

    @classmethod
    def from_mapping(cls, data: Mapping[str, Any] | None, *, revision: str | None = None) -> ProjectInfo:
        """From a site file's ``[project]`` table (already validated); ``revision`` overrides it."""
        known = {f.name for f in fields(cls)}
        values = {k: " ".join(str(v).split()) for k, v in (data or {}).items() if k in known and v is not None}
        info = cls(**values)
        if revision is not None and str(revision).strip():
            info = replace(info, revision=" ".join(str(revision).split()))
        return info

    @property
    def dated(self) -> str:
        """The date to print: the one given, else SOURCE_DATE_EPOCH's day, else blank."""
        return self.date or source_date() or ""


def source_date() -> str | None:
    """The UTC day of ``SOURCE_DATE_EPOCH`` as ``YYYY-MM-DD``, or None when unset or invalid."""
    text = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    if not text:
        return None
    try:
        stamp = int(text)
        return datetime.datetime.fromtimestamp(stamp, tz=datetime.UTC).date().isoformat()
    except (ValueError, OverflowError, OSError):
        return None


def source_datetime() -> datetime.datetime | None:
    """``SOURCE_DATE_EPOCH`` as an aware UTC datetime, or None."""
    text = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    try:
        return datetime.datetime.fromtimestamp(int(text), tz=datetime.UTC) if text else None
    except (ValueError, OverflowError, OSError):
        return None


def file_sha12(path: Any) -> str | None:
    """First 12 hex digits of the SHA-256 of the file at ``path`` (read only), or None."""
    if path is None:
        return None
    p = Path(str(path))
    try:
        if not p.is_file():
            return None
        digest = hashlib.sha256()
        with open(p, "rb") as fh:
            for block in iter(lambda: fh.read(1 << 20), b""):
                digest.update(block)
        return digest.hexdigest()[:12]
    except OSError:
        return None


def _name(path: Any) -> str:
    text = "" if path is None else str(path)
    return os.path.basename(text.rstrip("/\\")) or text


def settings_text(settings: Mapping[str, Any]) -> str:
    """The settings that change answers, as one short line."""
    parts = []
    step = settings.get("heading_step_deg")
    if isinstance(step, (int, float)):
        parts.append(f"heading step {float(step):g}°")
    req = settings.get("required_clearance_m")
    if isinstance(req, (int, float)):
        parts.append(f"clearance {float(req):.2f} m")
    tol = settings.get("tolerance_m")
    if isinstance(tol, (int, float)):
        parts.append(f"tolerance {float(tol) * 1000:.0f} mm")
    margin = settings.get("margin_m")
    if isinstance(margin, (int, float)):
        parts.append(f"margin {float(margin):.2f} m")
    return " · ".join(parts)


@dataclass(frozen=True)
class TitleBlock:
    """Everything a sheet's title block shows (text only)."""

    project: ProjectInfo
    drawing: str
    drawing_sha12: str | None
    vehicle: str
    vehicle_file: str
    vehicle_sha12: str | None
    version: str
    settings: str

    def cells(self) -> list[tuple[str, str]]:
        """(label, value) pairs in print order; blank values print as a dash."""
        p = self.project
        out = [(label, getattr(p, attr) if attr != "date" else p.dated) for attr, label in PROJECT_FIELDS]
        out += [
            ("drawing", f"{self.drawing}" + (f" · sha256 {self.drawing_sha12}" if self.drawing_sha12 else "")),
            ("vehicle", f"{self.vehicle}" + (f" · {self.vehicle_file}" if self.vehicle_file else "")
             + (f" · sha256 {self.vehicle_sha12}" if self.vehicle_sha12 else "")),
            ("settings", self.settings),
            ("made with", f"floorfit {self.version}"),
        ]
        return out


def title_block(result: Any, project: ProjectInfo | None = None) -> TitleBlock:
    """The title block of ``result`` (a CheckResult) with ``project`` fields (blank when None)."""
    vehicle = result.vehicle
    source = getattr(vehicle, "source", None)
    return TitleBlock(
        project=project or ProjectInfo(),
        drawing=_name(result.plan.source), drawing_sha12=file_sha12(result.plan.source),
        vehicle=str(getattr(vehicle, "name", "")), vehicle_file=_name(source) if source else "",
        vehicle_sha12=file_sha12(source), version=__version__,
        settings=settings_text(result.settings or {}))
