"""Unit decision, layer / block roles, the site file's role tables and ``floorfit inspect``."""

from __future__ import annotations

import json

import dxf_fixtures as F
import pytest

from floorfit.cli import main
from floorfit.errors import InputError, SiteError
from floorfit.plan.dxf import load_plan, read_roles, roles_from_site_table
from floorfit.plan.dxf.roles import RoleResolver, strip_xref_prefix
from floorfit.plan.dxf.units import UnitEvidence, decide_units, parse_units, unit_hint_from_text

# --- units ------------------------------------------------------------------------------

def test_parse_units_names_and_aliases():
    assert parse_units("MM") == ("mm", 0.001)
    assert parse_units("Inches") == ("in", 0.0254)        # 1 in = 0.0254 m exactly (1959 yard)
    assert parse_units("feet") == ("ft", 0.3048)
    assert parse_units("metre") == ("m", 1.0)
    with pytest.raises(InputError) as info:
        parse_units("meterz")
    assert str(info.value).startswith("--units: unknown unit 'meterz' (did you mean 'meter")


def test_header_used_but_door_sizes_point_to_inches():
    ev = UnitEvidence(header_code=4, door_sizes=[30.0, 32.0, 36.0, 30.0], extent=960.0)
    d = decide_units(ev)
    assert d.name == "mm" and d.metres_per_unit == 0.001
    assert d.likely == "in"
    assert d.warning.startswith("header says mm ($INSUNITS = 4), but doors would be 0.031 m wide (median of 4)")
    assert "likely unit: in" in d.warning and "pass --units in to override" in d.warning


def test_no_header_unit_chooses_from_doors_then_note_then_extent():
    assert decide_units(UnitEvidence(header_code=0, door_sizes=[900.0, 800.0])).name == "mm"
    assert decide_units(UnitEvidence(header_code=0, door_sizes=[0.9, 0.8])).name == "m"
    assert decide_units(UnitEvidence(header_code=0, door_sizes=[3.0, 2.5])).name == "ft"
    d = decide_units(UnitEvidence(header_code=None, extent=51995.0))
    assert d.name == "mm" and d.warning is None
    assert d.reason == ("no $INSUNITS in the header; chose mm: the extent of 5.2e+04 units is 52 m as mm; "
                        "also plausible: cm, in")
    assert decide_units(UnitEvidence(header_code=None, measurement=0, extent=1000.0)).name == "in"
    noted = decide_units(UnitEvidence(header_code=0, extent=60.0,
                                      text_hint=("m", "Measurements in [m]")))
    assert noted.name == "m" and "Measurements in [m]" in noted.reason


def test_nothing_plausible_falls_back_with_a_warning():
    d = decide_units(UnitEvidence(header_code=None, extent=0.5))
    assert d.name == "mm" and "pass --units" in d.warning


def test_override_is_used_and_checked():
    d = decide_units(UnitEvidence(header_code=6, door_sizes=[900.0] * 3), override="m")
    assert d.name == "m" and d.reason == "given by the caller (m)"
    assert "likely unit: mm" in d.warning
    assert decide_units(UnitEvidence(header_code=6, door_sizes=[900.0] * 3), override="mm").warning is None


def test_unit_notes_in_text():
    assert unit_hint_from_text("Drawing not true to scale! Measurements in [m]") == "m"
    assert unit_hint_from_text("All dimensions in millimetres") == "mm"
    assert unit_hint_from_text("UNITS: inches") == "in"
    assert unit_hint_from_text("x = 0,208921") is None


# --- roles ------------------------------------------------------------------------------

@pytest.mark.parametrize("layer,role", [
    ("A-WALL", "wall"), ("A-WALL-FULL", "wall"), ("xref-Bishop-Overland-08$0$A-WALL", "wall"),
    ("HOUSE|A-DOOR", "door"), ("A-DOOR", "door"), ("Doors", "door"), ("Tueren", "door"), ("门", "door"),
    ("A-OPENING", "opening"), ("A-COLS", "solid"), ("Columns", "solid"), ("Stuetze", "solid"),
    ("A-FURN", "furniture"), ("Moebel", "furniture"), ("A-FLOR-PATT", "ignore"), ("Flooring", "ignore"),
    ("Boden", "ignore"), ("A-DIMS-1", "ignore"), ("Defpoints", "ignore"), ("VIEWPORT", "ignore"),
    ("HIDDEN", "ignore"), ("GRIDLINES", "ignore"), ("Roof", "ignore"), ("Projection", "ignore"),
    ("A-ANNO-TEXT", "label"), ("TEXT", "label"), ("A-GLAZ", "wall"), ("Wand", "wall"), ("mur", "wall"),
    ("muro", "wall"), ("墙", "wall"), ("A21----", "wall"), ("A28", "solid"), ("A-ELEV-HATC", "ignore"),
])
def test_default_layer_roles(layer, role):
    choice = RoleResolver().layer_role(layer)
    assert choice.role == role and choice.known


def test_unknown_layers_fall_back_to_wall_and_caller_patterns_win():
    resolver = RoleResolver({"myst*": "solid", "blocks": {"BENCH*": "ignore"}})
    assert resolver.layer_role("MYSTERY").role == "solid"
    assert resolver.layer_role("MYSTERY").reason == "caller's pattern 'myst*'"
    other = RoleResolver().layer_role("MYSTERY")
    assert other.role == "wall" and not other.known
    assert RoleResolver().layer_role("0").role == "wall"
    assert resolver.block_role("BENCH-2").role == "ignore"


def test_block_roles_and_furniture_policy():
    r = RoleResolver()
    assert r.block_role("DOOR").role == "door"
    assert r.block_role("D90H").role == "door"
    assert r.block_role("$DorLib2D$00000001").role == "door"
    assert r.block_role("Gridline Bubble").role == "ignore"
    assert r.block_role("*U12") is None and r.block_role("DESK2") is None
    assert r.furniture_policy(["CHAIR7", "CHAIRS"]).role == "ignore"
    assert r.furniture_policy(["xref-Bishop-Overland-08$0$P-Toilet"]).role == "solid"
    assert r.furniture_policy(["KITSINK26"]).role == "solid"
    assert r.furniture_policy(["DESK2", "FURNITURE"]).role == "solid"


def test_xref_prefix_stripping():
    assert strip_xref_prefix("xref-Bishop-Overland-08$0$A-WALL") == "A-WALL"
    assert strip_xref_prefix("PLAN|A-DOOR") == "A-DOOR"
    assert strip_xref_prefix("A-WALL") == "A-WALL"


def test_roles_on_a_drawing_and_furniture_blocks(tmp_path):
    path = F.write_roles_sample(tmp_path / "roles.dxf")
    plan = load_plan(path)
    # walls: A-WALL, the bound xref A-WALL, Wand, 墙, A21---- and the unknown MYSTERY
    assert len(plan.walls) == 6
    assert len(plan.solids) == 1                              # the WC; the movable CHAIR is ignored
    assert plan.geometry_to_drawing(plan.solids[0]).bounds == pytest.approx((7, 0, 7.5, 0.5))
    unknown = [i for i in plan.issues if i.kind == "unknown-layer"]
    assert [i.layer for i in unknown] == ["MYSTERY"]
    plan2 = load_plan(path, roles={"MYSTERY": "ignore", "blocks": {"CHAIR": "solid"}})
    assert len(plan2.walls) == 5 and len(plan2.solids) == 2
    assert not any(i.kind == "unknown-layer" for i in plan2.issues)


# --- site file --------------------------------------------------------------------------

def test_read_roles_from_a_site_file(tmp_path):
    site = tmp_path / "site.toml"
    site.write_text('[layers]\n"RACK*" = "solid"\n"A-WALL*" = "wall"\n\n[blocks]\n"CHAIR*" = "ignore"\n\n'
                    '[stations]\ndock = { x = 1.0, y = 2.0 }\n', encoding="utf-8")
    assert read_roles(site) == {"RACK*": "solid", "A-WALL*": "wall", "blocks": {"CHAIR*": "ignore"}}
    assert roles_from_site_table({"layers": {"X": "door"}}, "s.toml") == {"X": "door"}


def test_site_file_errors_name_file_key_and_hint(tmp_path):
    site = tmp_path / "site.toml"
    site.write_text('[layer]\n"RACK*" = "solid"\n', encoding="utf-8")
    with pytest.raises(SiteError) as info:
        read_roles(site)
    assert str(info.value) == f"{site}: layer: unknown key 'layer' (did you mean 'layers'?)"
    site.write_text('[layers]\n"RACK*" = "soild"\n', encoding="utf-8")
    with pytest.raises(SiteError) as info:
        read_roles(site)
    assert str(info.value) == (f"{site}: layers.RACK*: 'soild' is not one of wall, solid, door, opening, label, "
                               "ignore, furniture (did you mean 'solid'?)")
    site.write_text('[blocks]\n"DOOR*" = "label"\n', encoding="utf-8")
    with pytest.raises(SiteError, match="blocks.DOOR\\*: 'label' is not one of"):
        read_roles(site)


# --- the inspect command ----------------------------------------------------------------

def test_inspect_command_prints_and_writes_json(tmp_path, capsys):
    path = F.write_doors(tmp_path / "doors.dxf", "R2000", "mm")
    out = tmp_path / "report.json"
    assert main(["inspect", str(path), "--json", str(out)]) == 0
    text = capsys.readouterr().out
    assert "unit        mm (0.001 m per unit): $INSUNITS = 4 (mm)" in text
    assert "A-DOOR" in text and "Tueren" in text and "doors       6" in text
    data = json.loads(out.read_text(encoding="utf-8"))
    assert data["dxf_version"] == "AC1015"
    assert data["units"] == {"name": "mm", "metres_per_unit": 0.001, "reason": "$INSUNITS = 4 (mm)",
                             "warning": None, "likely": None}
    assert data["extent_m"] == pytest.approx([0, 0, 70, 1.0], abs=1e-6)     # the r = 1 swing reaches y = 1
    assert data["counts"]["doors"] == 6 and data["counts"]["labels"] == 1
    assert {"name": "A-DOOR", "role": "door", "entities": 2, "reason": "door layer ('a-door*')"} in data["layers"]
    assert not list(tmp_path.glob(".report.json.*"))          # the temporary file was renamed


def test_inspect_command_site_window_layers_and_bad_input(tmp_path, capsys):
    path = F.write_roles_sample(tmp_path / "roles.dxf", "R2018", "m")
    site = tmp_path / "site.toml"
    site.write_text('[layers]\n"MYST*" = "solid"\n', encoding="utf-8")
    out = tmp_path / "r.json"
    assert main(["inspect", str(path), "--site", str(site), "--window=-1,-1,2,20", "--layers", "MYST*",
                 "A-*", "--json", str(out)]) == 0
    data = json.loads(out.read_text(encoding="utf-8"))
    roles = {layer["name"]: layer["role"] for layer in data["layers"]}
    assert roles["MYSTERY"] == "solid"
    capsys.readouterr()
    assert main(["inspect", str(tmp_path / "missing.dxf")]) == 2
    assert capsys.readouterr().err.strip() == f"floorfit inspect: {tmp_path / 'missing.dxf'}: file not found"
    assert main(["inspect", str(path), "--window", "1,2,3"]) == 2
    assert "expected four numbers" in capsys.readouterr().err
    assert main(["inspect", str(path), "--units", "parsec-ish"]) == 2
