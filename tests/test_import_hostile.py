"""Hostile and broken drawings: each is refused with one exact line naming file, place and
problem, raising floorfit's own error type and no other, and bombs are refused before
anything is expanded."""

from __future__ import annotations

import time

import dxf_fixtures as F
import pytest

from floorfit.errors import LimitExceeded, PlanImportError
from floorfit.plan.dxf import ImportLimits, load_plan


def _refused(path, error, **kw) -> str:
    with pytest.raises(error) as info:
        load_plan(path, **kw)
    assert type(info.value) is error
    text = str(info.value)
    assert "\n" not in text
    return text


def test_self_referencing_block(tmp_path):
    p = F.write_self_reference(tmp_path / "self.dxf")
    assert _refused(p, LimitExceeded) == f"{p}: block 'A': references itself (A -> A)"


def test_block_cycle_through_a_chain(tmp_path):
    p = F.write_reference_chain(tmp_path / "chain.dxf")
    assert _refused(p, LimitExceeded) == f"{p}: block 'A': references itself through a chain (A -> B -> C -> A)"


@pytest.mark.slow
def test_ten_thousand_deep_nesting_is_refused_without_recursion(tmp_path):
    p = F.write_deep_nesting(tmp_path / "deep.dxf", depth=10_000)
    assert _refused(p, LimitExceeded) == (
        f"{p}: block 'N64': blocks nest deeper than 64 levels (ImportLimits.max_block_depth)")


def test_nesting_limit_is_configurable(tmp_path):
    p = F.write_deep_nesting(tmp_path / "deep.dxf", depth=12)
    plan = load_plan(p)                                         # 12 levels: fine by default
    assert len(plan.walls) == 1
    assert _refused(p, LimitExceeded, limits=ImportLimits(max_block_depth=10)) == (
        f"{p}: block 'N10': blocks nest deeper than 10 levels (ImportLimits.max_block_depth)")


def test_minsert_bomb_is_refused_before_expansion(tmp_path):
    p = F.write_minsert_bomb(tmp_path / "bomb.dxf")
    start = time.perf_counter()
    text = _refused(p, LimitExceeded)
    elapsed = time.perf_counter() - start
    # 1 + 10^6 x (1 + 10^6 x (1 + 1)) entities, INSERT copies included
    assert text.endswith(": expanding the blocks would produce 2,000,001,000,001 entities, limit 2,000,000 "
                         "(ImportLimits.max_expanded_entities); largest contribution from block 'L2'")
    assert text.startswith(f"{p}: INSERT #")
    assert elapsed < 2.0                                        # counted, never expanded


def test_polyline_over_the_vertex_limit(tmp_path):
    p = F.write_big_polyline(tmp_path / "poly.dxf", vertices=10_000)
    text = _refused(p, LimitExceeded, limits=ImportLimits(max_vertices_per_entity=1_000))
    assert text.endswith(": entity has 10,000 vertices, limit 1,000 (ImportLimits.max_vertices_per_entity)")
    assert len(load_plan(p).walls) == 1                         # within the default limit (200 000)


@pytest.mark.slow
def test_million_vertex_polyline_refused_by_default(tmp_path):
    p = F.write_big_polyline(tmp_path / "poly.dxf", vertices=1_000_000)
    text = _refused(p, LimitExceeded)
    assert text.endswith(": entity has 1,000,000 vertices, limit 200,000 (ImportLimits.max_vertices_per_entity)")


def test_curve_needing_too_many_vertices(tmp_path):
    import ezdxf
    doc = ezdxf.new("R2000")
    doc.units = 6
    doc.modelspace().add_circle((0, 0), 5e8, dxfattribs={"layer": "A-WALL"})   # 500 000 km radius
    doc.saveas(tmp_path / "circle.dxf")
    text = _refused(tmp_path / "circle.dxf", LimitExceeded, limits=ImportLimits(max_abs_coordinate=1e12,
                                                                               max_extent_m=1e13))
    assert "curve needs" in text and "vertices at the chord tolerance" in text


def test_coordinate_beyond_limit(tmp_path):
    p = F.write_huge_coordinate(tmp_path / "huge.dxf")
    text = _refused(p, LimitExceeded)
    assert text.startswith(f"{p}: entity #")
    assert text.endswith(": coordinate 1e+300 exceeds the limit 1e+09 drawing units (ImportLimits.max_abs_coordinate)")


def test_nan_coordinate(tmp_path):
    p = F.write_nan_coordinate(tmp_path / "nan.dxf")
    text = _refused(p, PlanImportError)
    assert text.startswith(f"{p}: entity #") and text.endswith(": non-finite coordinate (NaN or infinity)")


def test_not_a_dxf_file(tmp_path):
    p = F.write_not_dxf(tmp_path / "picture.dxf")
    assert _refused(p, PlanImportError) == f"{p}: not a DXF file (no DXF section structure at the start)"


def test_truncated_before_the_entities(tmp_path):
    p = F.write_truncated(tmp_path / "cut.dxf", 0.5)
    assert _refused(p, PlanImportError) == (
        f"{p}: the file is cut short (no EOF marker) and no model-space entity could be recovered")


def test_truncated_inside_the_entities_is_recovered_with_issues(tmp_path):
    p = F.write_truncated(tmp_path / "cut.dxf", 0.9)
    plan = load_plan(p)
    kinds = [i.kind for i in plan.issues]
    assert "truncated" in kinds and "repaired" in kinds
    assert 0 < len(plan.walls) <= 200


def test_empty_model_space(tmp_path):
    p = F.write_empty_modelspace(tmp_path / "empty.dxf")
    assert _refused(p, PlanImportError) == (
        f"{p}: model space is empty (paper space holds 1 entity; floorfit reads model space only)")


def test_missing_empty_and_folder(tmp_path):
    assert _refused(tmp_path / "nope.dxf", PlanImportError) == f"{tmp_path / 'nope.dxf'}: file not found"
    (tmp_path / "zero.dxf").write_bytes(b"")
    assert _refused(tmp_path / "zero.dxf", PlanImportError) == f"{tmp_path / 'zero.dxf'}: file is empty"
    assert _refused(tmp_path, PlanImportError) == f"{tmp_path}: is a folder, expected a DXF file"


def test_nothing_usable(tmp_path):
    p = F.write_basic(tmp_path / "basic.dxf", "R2000", "m")
    assert _refused(p, PlanImportError, layers=["A-FLOR-*"]) == (
        f"{p}: nothing usable: no obstacle geometry in model space (6 entities outside the selected layers)")


def test_absurd_size(tmp_path):
    import ezdxf
    doc = ezdxf.new("R2000")
    doc.units = 6                                              # metres
    doc.modelspace().add_line((0, 0), (5e8, 0), dxfattribs={"layer": "A-WALL"})
    doc.saveas(tmp_path / "wide.dxf")
    assert _refused(tmp_path / "wide.dxf", PlanImportError) == (
        f"{tmp_path / 'wide.dxf'}: the geometry is 5e+08 m across with unit m, absurd for a floor plan "
        "(limit 100000 m); check --units or crop with --window")


def test_bad_arguments_are_input_errors(tmp_path):
    from floorfit.errors import InputError
    p = F.write_basic(tmp_path / "basic.dxf", "R2000", "m")
    with pytest.raises(InputError, match="unknown unit 'meterz'"):
        load_plan(p, units="meterz")
    with pytest.raises(InputError, match="xmin < xmax"):
        load_plan(p, window=(5, 0, 1, 1))
    with pytest.raises(InputError, match="bad layer roles"):
        load_plan(p, roles={"A-*": "wal"})


def test_control_characters_do_not_reach_labels(tmp_path):
    import ezdxf
    doc = ezdxf.new("R2018")
    doc.units = 6
    msp = doc.modelspace()
    msp.add_line((0, 0), (5, 0), dxfattribs={"layer": "A-WALL"})
    msp.add_text("\x1b[2J\x1b[31mROOM\t1\x07", dxfattribs={"layer": "A-ANNO-TEXT", "insert": (1, 1)})
    doc.saveas(tmp_path / "esc.dxf")
    stored = ezdxf.readfile(tmp_path / "esc.dxf").modelspace().query("TEXT")[0].dxf.text
    assert "\x1b" in stored and "\x07" in stored          # the drawing really holds the escapes
    (label,) = load_plan(tmp_path / "esc.dxf").labels
    assert label.text == "[2J[31mROOM 1"                  # ESC and BEL removed, TAB -> space, rest raw


def test_randomly_damaged_files_raise_only_floorfit_errors(tmp_path):
    """Byte-level damage (fixed seed): every outcome is a plan or a FloorfitError, never another type."""
    import random

    from floorfit.errors import FloorfitError
    source = F.write_doors(tmp_path / "doors.dxf", "R2000", "mm").read_bytes()
    rng = random.Random(5050)
    outcomes = {"plan": 0, "refused": 0}
    for k in range(25):
        data = bytearray(source)
        for _ in range(rng.choice([1, 5, 40])):
            pos = rng.randrange(len(data))
            data[pos] = rng.choice(b"0123456789.-eE \nABCXYZ")
        path = tmp_path / f"damaged{k}.dxf"
        path.write_bytes(bytes(data))
        try:
            load_plan(path)
            outcomes["plan"] += 1
        except FloorfitError as exc:
            assert "\n" not in str(exc)
            outcomes["refused"] += 1
    assert outcomes["plan"] + outcomes["refused"] == 25
