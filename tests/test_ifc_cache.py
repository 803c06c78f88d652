"""The IFC import cache: keyed by file hash, storey and band; stated in the plan's import
notes; off unless turned on (the commands turn it on with the slice cache)."""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from ifc_fixtures import build_corridor

from floorfit.plan.ifc import load_ifc
from floorfit.plan.ifc.cache import import_cache_dir, use_import_cache


@pytest.fixture()
def cache(tmp_path):
    before = import_cache_dir()
    use_import_cache(tmp_path / "cache")
    yield tmp_path / "cache"
    use_import_cache(before)


def _notes(plan):
    return [i.message for i in plan.issues if i.kind == "cache"]


def test_second_import_comes_from_the_cache_and_says_so(tmp_path, cache):
    path = build_corridor(tmp_path / "corridor.ifc")
    first = load_ifc(path, band_top_m=1.1)
    assert any("stored in the import cache" in n for n in _notes(first))
    again = load_ifc(path, band_top_m=1.1)
    assert any("read from the import cache" in n for n in _notes(again))
    assert len(again.walls) == len(first.walls) and len(again.solids) == len(first.solids)
    assert all(shapely.equals(a, b) for a, b in zip(again.walls, first.walls))
    assert np.array_equal(again.solid_heights, first.solid_heights)
    assert [d.label for d in again.doors] == [d.label for d in first.doors]
    # another band, or a changed file, is imported afresh
    assert not any("read from" in n for n in _notes(load_ifc(path, band_top_m=2.5)))
    build_corridor(path, storey_z=1.0)
    assert not any("read from" in n for n in _notes(load_ifc(path, band_top_m=1.1)))


def test_off_by_default_in_the_library(tmp_path):
    use_import_cache(None)
    plan = load_ifc(build_corridor(tmp_path / "corridor.ifc"))
    assert not _notes(plan)
