"""Opening an IFC model: refusing what is not one, its length unit, its storeys.

Geometry from the geometry iterator is always in metres; attribute values (a door's
``OverallWidth``, a storey's ``Elevation``) are in the model's length unit, which comes from
the project's ``IfcUnitAssignment`` and is converted here once.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

from floorfit.errors import InputError, PlanImportError

__all__ = ["SUPPORTED_SCHEMAS", "LengthUnit", "Storey", "open_model", "length_unit", "list_storeys",
           "choose_storey", "storey_label", "require_ifcopenshell"]

#: Schemas read (ifcopenshell's identifiers; IFC4X3 covers its addenda).
SUPPORTED_SCHEMAS = ("IFC2X3", "IFC4", "IFC4X3")

_SI_PREFIX = {None: 1.0, "EXA": 1e18, "PETA": 1e15, "TERA": 1e12, "GIGA": 1e9, "MEGA": 1e6, "KILO": 1e3,
              "HECTO": 1e2, "DECA": 1e1, "DECI": 1e-1, "CENTI": 1e-2, "MILLI": 1e-3, "MICRO": 1e-6,
              "NANO": 1e-9, "PICO": 1e-12, "FEMTO": 1e-15, "ATTO": 1e-18}
_SHORT = {1.0: "m", 1e-3: "mm", 1e-2: "cm", 1e-1: "dm", 1e3: "km", 0.0254: "in", 0.3048: "ft"}


def require_ifcopenshell():
    """The ifcopenshell module, or a one-line error saying how to get it."""
    try:
        import ifcopenshell
    except ImportError:  # pragma: no cover - it is a core dependency
        raise PlanImportError("reading IFC models needs the ifcopenshell package: pip install ifcopenshell") \
            from None
    return ifcopenshell


def open_model(path):
    """Open ``path`` as an IFC model; :class:`PlanImportError` naming the file otherwise."""
    ifcopenshell = require_ifcopenshell()
    p = Path(path)
    src = str(path)
    if not p.exists():
        raise PlanImportError("file not found", src)
    if p.is_dir():
        raise PlanImportError("is a folder, not an IFC file", src)
    with open(p, "rb") as fh:
        head = fh.read(4096)
    if not head.strip():
        raise PlanImportError("empty file", src)
    text = head.lstrip(b"\xef\xbb\xbf").lstrip()
    if head[:2] == b"PK":
        raise PlanImportError("a zip archive (IFC-ZIP?); unzip it and give the .ifc inside", src)
    if not text.upper().startswith(b"ISO-10303-21"):
        what = "an XML file (ifcXML is not read)" if text.startswith(b"<") else "no ISO-10303-21 header"
        raise PlanImportError(f"not an IFC file: {what}", src)
    try:
        model = ifcopenshell.open(src)
    except ifcopenshell.SchemaError as exc:
        raise PlanImportError(f"unsupported IFC schema ({exc}); floorfit reads "
                              f"{', '.join(SUPPORTED_SCHEMAS)}", src) from None
    except (ifcopenshell.Error, OSError, RuntimeError) as exc:
        raise PlanImportError(f"not a readable IFC file: {exc}", src) from None
    if model.schema not in SUPPORTED_SCHEMAS:
        raise PlanImportError(f"unsupported IFC schema {model.schema}; floorfit reads "
                              f"{', '.join(SUPPORTED_SCHEMAS)}", src)
    return model


@dataclass(frozen=True)
class LengthUnit:
    """The model's length unit: short name, metres per unit, where it came from, a warning."""

    name: str
    metres_per_unit: float
    source: str
    warning: str | None = None


def length_unit(model) -> LengthUnit:
    """The length unit of the project's unit assignment."""
    import ifcopenshell.util.unit as uu

    assignments = model.by_type("IfcUnitAssignment")
    for ua in assignments:
        for unit in ua.Units or ():
            if getattr(unit, "UnitType", None) != "LENGTHUNIT":
                continue
            scale = float(uu.calculate_unit_scale(model))
            if unit.is_a("IfcSIUnit"):
                words = f"IfcSIUnit {(unit.Prefix + ' ') if unit.Prefix else ''}{unit.Name}"
            else:
                words = f"{unit.is_a()} {getattr(unit, 'Name', '')}"
            name = next((v for k, v in _SHORT.items() if math.isclose(k, scale, rel_tol=1e-9)), f"{scale:g} m")
            return LengthUnit(name, scale, f"IfcUnitAssignment #{ua.id()}: {words.strip()}")
    return LengthUnit("m", 1.0, "no length unit in the model's unit assignment",
                      "the model states no length unit; attribute values are read as metres")


@dataclass(frozen=True)
class Storey:
    """One building storey: its name, floor height (world z, metres) and what it holds."""

    entity: object
    name: str | None
    elevation_m: float                 # world z of the storey placement
    elevation_attr_m: float | None     # the Elevation attribute, converted (None when unset)
    global_id: str
    walls: int                         # walls contained (directly or through parts and spaces)
    slabs: int
    elements: int

    @property
    def label(self) -> str:
        return storey_label(self)


def storey_label(storey: Storey) -> str:
    return storey.name if storey.name else f"unnamed storey #{storey.entity.id()}"


def _placement_z(product, scale: float) -> float:
    import ifcopenshell.util.placement as up

    if product.ObjectPlacement is None:
        return 0.0
    matrix = up.get_local_placement(product.ObjectPlacement)
    return float(matrix[2][3]) * scale


def storey_elements(storey_entity) -> list:
    """Every element of a storey: contained directly, in its spaces, and their parts."""
    import ifcopenshell.util.element as ue

    return [e for e in ue.get_decomposition(storey_entity) if e.is_a("IfcElement")]


def list_storeys(model, unit: LengthUnit) -> list[Storey]:
    """The model's storeys, lowest first."""
    out = []
    for st in model.by_type("IfcBuildingStorey"):
        elements = storey_elements(st)
        walls = sum(1 for e in elements if e.is_a("IfcWall") or e.is_a("IfcCurtainWall"))
        slabs = sum(1 for e in elements if e.is_a("IfcSlab"))
        elev = getattr(st, "Elevation", None)
        name = (st.Name or "").strip() or None
        out.append(Storey(st, name, _placement_z(st, unit.metres_per_unit),
                          None if elev is None else float(elev) * unit.metres_per_unit,
                          st.GlobalId, walls, slabs, len(elements)))
    out.sort(key=lambda s: (s.elevation_m, s.entity.id()))
    return out


def _listing(storeys: list[Storey]) -> str:
    return ", ".join(f"{s.label} ({s.elevation_m:.2f} m)" for s in storeys)


def choose_storey(storeys: list[Storey], wanted: str | float | None, src: str) -> tuple[Storey, str]:
    """The storey asked for (a name, or an elevation in metres within 5 cm), or by default the
    storey nearest 0 m that holds walls. Returns (storey, why)."""
    if wanted is None or (isinstance(wanted, str) and not wanted.strip()):
        with_walls = [s for s in storeys if s.walls]
        pool = with_walls or storeys
        best = min(pool, key=lambda s: (abs(s.elevation_m), -s.elevation_m))
        why = ("the storey nearest 0 m that holds walls" if with_walls
               else "the storey nearest 0 m (no storey holds walls)")
        return best, why
    text = str(wanted).strip()
    for s in storeys:
        if s.name is not None and s.name.strip().lower() == text.lower():
            return s, "given by name"
    for s in storeys:
        if s.name is None and text.lower() == storey_label(s).lower():
            return s, "given by name"
    try:
        value = float(text)
    except ValueError:
        value = None
    if value is not None and math.isfinite(value):
        near = [s for s in storeys if abs(s.elevation_m - value) <= 0.05]
        if near:
            return min(near, key=lambda s: abs(s.elevation_m - value)), f"given by elevation {value:g} m"
    raise InputError(f"no storey '{text}'; the storeys are: {_listing(storeys)}", src, "--storey")
