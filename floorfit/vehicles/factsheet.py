"""Vehicle outlines from a VDA 5050 factsheet (JSON).

Field names checked against the VDA 5050 specification text and JSON schema of the
VDA5050/VDA5050 repository:

* version 2.x (``VDA5050_EN.md`` 2.1.0, section "agvGeometry" and "physicalParameters"):
  ``physicalParameters.{length, width, heightMin, heightMax}`` (metres),
  ``agvGeometry.envelopes2d[] = {set, polygonPoints[{x, y}], description}``,
  ``typeSpecification.seriesName``;
* the newer schema (``json_schemas/factsheet.schema``, "Mobile Robot Factsheet"):
  ``physicalParameters.{length, width, minimumHeight, maximumHeight}``,
  ``mobileRobotGeometry.envelopes2d[] = {envelope2dId, vertices[{x, y}], description}``.

Both are accepted. Envelopes are polygons in the vehicle coordinate system, metres,
"assumed as closed" and non-self-intersecting (spec). Which envelope is the body and
which is the loaded outline is free text in ``set`` / ``envelope2dId`` /
``description``: names mentioning "load" (not "unload") are taken as the loaded
outline, names mentioning safety fields ("field", "safety", "scanner", "protective",
"warning") are skipped, the first remaining one is the outline. Without envelopes the
outline is the ``length`` x ``width`` rectangle centred on the vehicle origin (an
assumption: the factsheet does not say where the origin lies in the box).
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

from floorfit.errors import VehicleError

__all__ = ["outline_from_factsheet"]

_SAFETY_WORDS = ("field", "safety", "scanner", "protective", "warning", "laser")


def _number(value: Any, path: str, where: str, positive: bool = False) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(float(value)):
        raise VehicleError(f"expected a finite number, got {value!r}", path, where)
    value = float(value)
    if positive and value <= 0:
        raise VehicleError(f"must be positive, got {value:g}", path, where)
    return value


def _polygon(points: Any, path: str, where: str) -> list[tuple[float, float]]:
    if not isinstance(points, list) or len(points) < 3:
        raise VehicleError("an envelope needs a list of at least 3 points {x, y}", path, where)
    out = []
    for i, p in enumerate(points):
        if not isinstance(p, dict) or "x" not in p or "y" not in p:
            raise VehicleError(f"point {i + 1} must be an object with x and y", path, where)
        out.append((_number(p["x"], path, f"{where}[{i}].x"), _number(p["y"], path, f"{where}[{i}].y")))
    if len(out) > 3 and out[0] == out[-1]:
        out = out[:-1]
    area2 = sum(out[i][0] * out[(i + 1) % len(out)][1] - out[(i + 1) % len(out)][0] * out[i][1]
                for i in range(len(out)))
    if abs(area2) <= 1e-12:
        raise VehicleError("envelope encloses no area", path, where)
    if area2 < 0:                      # counter-clockwise, like every floorfit outline
        out.reverse()
    return out


# validates the factsheet field by field along its JSON paths, one error per bad field, then picks the outline
def outline_from_factsheet(path: str | Path) -> dict:  # noqa: C901
    """Outline(s) of a vehicle from a VDA 5050 factsheet.

    Returns
    -------
    dict
        ``outline`` [(x, y), ...] metres, counter-clockwise; ``name`` (series name, else
        manufacturer and serial number); ``height_m`` (heightMax / maximumHeight or None);
        ``length_m``, ``width_m``; ``loaded_outline`` when an envelope for the loaded
        state exists; ``envelopes`` {name: outline} of every 2-D envelope; ``source``
        (``"envelopes2d"`` or ``"physicalParameters"``).

    Raises
    ------
    VehicleError
        missing file, not JSON, missing or malformed fields (named by their JSON path).
    """
    p = Path(path)
    name = str(path)
    if not p.is_file():
        raise VehicleError("file not found" if not p.exists() else "not a file", name)
    try:
        data = json.loads(p.read_bytes().decode("utf-8"))
    except UnicodeDecodeError:
        raise VehicleError("not a text file (expected JSON, UTF-8)", name) from None
    except json.JSONDecodeError as exc:
        raise VehicleError(f"not valid JSON: {exc.msg}", name, f"line {exc.lineno}") from None
    if not isinstance(data, dict):
        raise VehicleError("expected a JSON object (a VDA 5050 factsheet)", name)
    phys = data.get("physicalParameters")
    if not isinstance(phys, dict):
        raise VehicleError("missing object 'physicalParameters'", name, "physicalParameters")
    length = phys.get("length")
    width = phys.get("width")
    length = _number(length, name, "physicalParameters.length", positive=True) if length is not None else None
    width = _number(width, name, "physicalParameters.width", positive=True) if width is not None else None
    height = None
    for key in ("heightMax", "maximumHeight"):
        if key in phys:
            height = _number(phys[key], name, f"physicalParameters.{key}", positive=True)
            break

    geometry_key = "agvGeometry" if "agvGeometry" in data else "mobileRobotGeometry"
    geometry = data.get(geometry_key) or {}
    if not isinstance(geometry, dict):
        raise VehicleError("expected an object", name, geometry_key)
    envelopes_raw = geometry.get("envelopes2d") or []
    if not isinstance(envelopes_raw, list):
        raise VehicleError("expected a list", name, f"{geometry_key}.envelopes2d")
    envelopes: dict[str, list[tuple[float, float]]] = {}
    body = loaded = None
    for i, env in enumerate(envelopes_raw):
        where = f"{geometry_key}.envelopes2d[{i}]"
        if not isinstance(env, dict):
            raise VehicleError("expected an object", name, where)
        label = str(env.get("set", env.get("envelope2dId", f"envelope {i + 1}")))
        points = env.get("polygonPoints", env.get("vertices"))
        key = "polygonPoints" if "polygonPoints" in env else "vertices"
        outline = _polygon(points, name, f"{where}.{key}")
        envelopes[label] = outline
        words = f"{label} {env.get('description', '')}".lower()
        if any(w in words for w in _SAFETY_WORDS):
            continue
        if "load" in words and "unload" not in words:
            loaded = loaded or outline
        elif body is None:
            body = outline
    source = "envelopes2d"
    if body is None:
        if length is None or width is None:
            raise VehicleError("no body envelope in envelopes2d and no length / width in physicalParameters",
                               name, "physicalParameters")
        hl, hw = length / 2.0, width / 2.0
        body = [(-hl, -hw), (hl, -hw), (hl, hw), (-hl, hw)]
        source = "physicalParameters"
    ts = data.get("typeSpecification") if isinstance(data.get("typeSpecification"), dict) else {}
    series = ts.get("seriesName")
    if isinstance(series, str) and series.strip():
        vehicle_name = series.strip()
    else:
        parts = [str(data[k]) for k in ("manufacturer", "serialNumber") if isinstance(data.get(k), (str, int))]
        vehicle_name = " ".join(parts) or p.stem
    result = {"outline": body, "name": vehicle_name, "height_m": height, "length_m": length, "width_m": width,
              "envelopes": envelopes, "source": source}
    if loaded is not None:
        result["loaded_outline"] = loaded
    return result
