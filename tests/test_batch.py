"""Fleet × sites: the matrix with known verdicts, run on local processes and on a local Dask cluster."""

import csv
import io
import json
import sys
from pathlib import Path

import ezdxf
import pytest

from floorfit.cli import main
from floorfit.errors import InputError
from floorfit.fleet.batch import read_manifest, run_batch
from floorfit.plan.dxf.importer import DEFAULT_CURVE_TOLERANCE_M

HEIGHT, WALL_T = 4.0, 0.2


def one_door_dxf(path, door: float) -> None:
    """Two 5 × 4 m rooms in metres, the wall between them at x = 5 with one door of width ``door``."""
    doc = ezdxf.new("R2013", setup=False)
    doc.header["$INSUNITS"] = 6
    doc.layers.add("A-WALL")
    msp = doc.modelspace()
    for x0, y0, x1, y1 in [(0, 0, 10.2, HEIGHT), (5, 0, 5 + WALL_T, HEIGHT / 2 - door / 2),
                           (5, HEIGHT / 2 + door / 2, 5 + WALL_T, HEIGHT)]:
        msp.add_lwpolyline([(x0, y0), (x1, y0), (x1, y1), (x0, y1)], close=True, dxfattribs={"layer": "A-WALL"})
    doc.saveas(path)


DOORS = {"wide": 1.00, "mid": 0.85, "narrow": 0.70}
WIDTHS = {"cart": 0.62, "wide-cart": 0.78}          # both 0.9 m long, 0.05 m margin
MARGIN = 0.05


@pytest.fixture
def manifest(tmp_path):
    (tmp_path / "plans").mkdir()
    for name, door in DOORS.items():
        one_door_dxf(tmp_path / "plans" / f"{name}.dxf", door)
    (tmp_path / "plans" / "broken.dxf").write_text("0\nSECTION\n2\nENTITIES\n0\nLINE\n")    # not a drawing
    (tmp_path / "two.site.toml").write_text(
        '[stations]\nA = { x = 2.5, y = 2.0 }\nB = { x = 7.7, y = 2.0 }\n[clearance]\nreference = "none"\n')
    for name, w in WIDTHS.items():
        (tmp_path / f"{name}.toml").write_text(
            f'name = "{name}"\n[footprint]\nwidth = {w}\nlength = 0.9\nmargin = {MARGIN}\n')
    sites = "".join(f'[[site]]\nname = "{n}"\nplan = "plans/{n}.dxf"\nsite = "two.site.toml"\n\n'
                    for n in [*DOORS, "broken"])
    vehicles = "".join(f'[[vehicle]]\nname = "{n}"\nfile = "{n}.toml"\n\n' for n in WIDTHS)
    # 10° heading steps: the door is crossed at a wall-aligned heading, whose cell is narrow (±0.05°),
    # and the rooms leave room to turn, so the verdicts and the sizing (precision 0.02 m) do not depend
    # on the step; JSON reports only, to keep the run short (the HTML link is tested below)
    path = tmp_path / "fleet.toml"
    path.write_text('[analysis]\nheading_step = 10.0\n[size]\nvary = "width"\nprecision = 0.02\n'
                    '[report]\nformats = ["json"]\n\n' + sites + vehicles)
    return path


def check_matrix(data: dict) -> None:
    assert data["sites"] == ["wide", "mid", "narrow", "broken"] and data["vehicles"] == ["cart", "wide-cart"]
    cells = {(c["site"], c["vehicle"]): c for c in data["cells"]}
    assert len(cells) == 8
    for site, door in DOORS.items():
        for veh, width in WIDTHS.items():
            c = cells[(site, veh)]
            fits = width + 2 * MARGIN < door
            assert c["status"] == ("pass" if fits else "fail"), (site, veh)
            assert c["findings"]["blocked"] == (0 if fits else 1)
            assert c["unreachable_pairs"] == (0 if fits else 1)
            assert c["report"] == f"{site}__{veh}/findings.json"
            # sizing margin: the largest width is just under the door less the margin (a slit passes
            # a body no wider than the slit), less at most the precision, the curve tolerance the sound
            # bound adds on each side, and 2 mm for the wall-aligned heading cell (±0.05°)
            s = c["sizing"]
            limit = door - 2 * MARGIN
            assert limit - 0.02 - 2 * DEFAULT_CURVE_TOLERANCE_M - 0.002 <= s["largest_m"] < limit
            assert s["sizing_margin_m"] == pytest.approx(s["largest_m"] - width, abs=1e-4)
            assert (s["sizing_margin_m"] >= 0) == fits
    for veh in WIDTHS:
        c = cells[("broken", veh)]
        assert c["status"] == "error" and "broken.dxf" in c["error"] and "\n" not in c["error"]
        assert c["findings"] is None and c["sizing"] is None
    assert data["counts"] == {"pass": 3, "fail": 3, "error": 2}


def test_batch_local_processes_and_dask_cluster_agree(manifest, tmp_path):
    distributed = pytest.importorskip("distributed")
    local = tmp_path / "local"
    assert main(["batch", str(manifest), "--workers", "2", "--out", str(local), "--quiet"]) == 1
    data = json.loads((local / "batch.json").read_text())
    check_matrix(data)
    for c in data["cells"]:
        if c["report"]:
            assert (local / c["report"]).is_file()
    rows = list(csv.DictReader(io.StringIO((local / "batch.csv").read_text(encoding="utf-8-sig"))))
    assert [(r["site"], r["vehicle"], r["status"]) for r in rows] == \
        [(c["site"], c["vehicle"], c["status"]) for c in data["cells"]]
    page = (local / "batch.html").read_text()
    assert page.count('href="') >= 6 and 'href="mid__cart/findings.json"' in page

    # the same manifest on a Dask cluster started here (worker processes, like separate machines)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
        on_dask = tmp_path / "dask"
        assert main(["batch", str(manifest), "--scheduler", cluster.scheduler_address, "--out", str(on_dask),
                     "--quiet"]) == 1
    assert (on_dask / "batch.json").read_bytes() == (local / "batch.json").read_bytes()
    assert (on_dask / "batch.csv").read_bytes() == (local / "batch.csv").read_bytes()


def test_batch_cell_report_is_linked(tmp_path):
    one_door_dxf(tmp_path / "a.dxf", 1.0)
    (tmp_path / "s.toml").write_text('[stations]\nA = { x = 2.5, y = 2.0 }\nB = { x = 7.7, y = 2.0 }\n'
                                     '[clearance]\nreference = "none"\n[analysis]\nheading_step = 5.0\n')
    (tmp_path / "v.toml").write_text('name = "v"\n[footprint]\nwidth = 0.6\nlength = 0.9\n')
    (tmp_path / "m.toml").write_text('[[site]]\nname = "a"\nplan = "a.dxf"\nsite = "s.toml"\n'
                                     '[[vehicle]]\nname = "v"\nfile = "v.toml"\n')
    result = run_batch(read_manifest(tmp_path / "m.toml"), tmp_path / "out", workers=1)
    cell = result.cell("a", "v")
    assert cell["status"] == "pass" and cell["sizing"] is None and cell["report"] == "a__v/report.html"
    assert (tmp_path / "out" / "a__v" / "report.html").is_file()
    assert (tmp_path / "out" / "a__v" / "overlay.dxf").is_file()          # all formats by default


@pytest.mark.parametrize("text, where", [
    ('[[site]]\nname = "a"\nplan = "a.dxf"\n[[vehicle]]\nname = "v"\nfile = "v.toml"\n[[vehicle]]\nname = "v"\n'
     'file = "v.toml"\n', "vehicle[2].name"),
    ('[[site]]\nname = "a"\nplan = "nope.dxf"\n[[vehicle]]\nname = "v"\nfile = "v.toml"\n', "site[1].plan"),
    ('[[site]]\nname = "a b"\nplan = "a.dxf"\n[[vehicle]]\nname = "v"\nfile = "v.toml"\n', "site[1].name"),
    ('[[site]]\nname = "a"\nplan = "a.dxf"\nstations = 1\n[[vehicle]]\nname = "v"\nfile = "v.toml"\n',
     "site[1].stations"),
    ('[size]\nvary = "height"\n[[site]]\nname = "a"\nplan = "a.dxf"\n[[vehicle]]\nname = "v"\nfile = "v.toml"\n',
     "size.vary"),
    ('[[site]]\nname = "a"\nplan = "a.dxf"\n', "vehicle"),
    ('[[site]]\nname = "a"\nplan = "a.dxf"\nunits = "furlong"\n[[vehicle]]\nname = "v"\nfile = "v.toml"\n',
     "site[1].units"),
], ids=["duplicate-name", "missing-file", "bad-name", "unknown-key", "bad-vary", "no-vehicle", "bad-units"])
def test_bad_manifest_is_exit_2_naming_the_key(tmp_path, capsys, text, where):
    (tmp_path / "a.dxf").write_text("")
    (tmp_path / "v.toml").write_text("")
    (tmp_path / "m.toml").write_text(text)
    with pytest.raises(InputError) as err:
        read_manifest(tmp_path / "m.toml")
    assert err.value.where == where
    assert main(["batch", str(tmp_path / "m.toml"), "--out", str(tmp_path / "out")]) == 2
    line = capsys.readouterr().err.strip()
    assert line.startswith("floorfit batch:") and "m.toml" in line and "\n" not in line


def test_missing_dask_is_one_clear_line(tmp_path, capsys, monkeypatch):
    one_door_dxf(tmp_path / "a.dxf", 1.0)
    (tmp_path / "v.toml").write_text('name = "v"\n[footprint]\nwidth = 0.6\nlength = 0.9\n')
    (tmp_path / "m.toml").write_text('[[site]]\nname = "a"\nplan = "a.dxf"\n[[vehicle]]\nname = "v"\nfile = "v.toml"\n')
    monkeypatch.setitem(sys.modules, "dask.distributed", None)       # as if the extra were not installed
    assert main(["batch", str(tmp_path / "m.toml"), "--scheduler", "tcp://127.0.0.1:1", "--out",
                 str(tmp_path / "out"), "--quiet"]) == 2
    line = capsys.readouterr().err.strip()
    assert "floorfit[dask]" in line and "\n" not in line


def test_batch_site_entry_picks_a_storey_of_a_building_model(tmp_path):
    # ../shared/models-ifc/stats.json: revit2014_unicode.ifc has storeys 1階 (z 0.0, 1 door contained)
    # and 2階 (z 3.0 m, no door); the default storey is the one nearest 0 m that holds walls
    model = (Path(__file__).resolve().parents[2] / "shared" / "models-ifc"
             / "opensourceBIM__TestFiles__revit2014_unicode.ifc")
    if not model.is_file():
        pytest.skip("../shared/models-ifc is not beside the checkout")
    (tmp_path / "v.toml").write_text('name = "v"\n[footprint]\nwidth = 0.6\nlength = 0.8\n')
    (tmp_path / "m.toml").write_text(
        f'[[site]]\nname = "ground"\nplan = "{model.as_posix()}"\n'
        f'[[site]]\nname = "upper"\nplan = "{model.as_posix()}"\nstorey = "3.0"\n'
        '[[vehicle]]\nname = "v"\nfile = "v.toml"\n[report]\nformats = ["json"]\n')
    run_batch(read_manifest(tmp_path / "m.toml"), tmp_path / "out", workers=1)
    doors = {c: json.loads((tmp_path / "out" / f"{c}__v" / "findings.json").read_text())["plan"]["doors"]
             for c in ("ground", "upper")}
    assert doors == {"ground": 1, "upper": 0}


def test_batch_storey_must_be_a_name_or_an_elevation(tmp_path):
    one_door_dxf(tmp_path / "a.dxf", 1.0)
    (tmp_path / "v.toml").write_text('name = "v"\n[footprint]\nwidth = 0.6\nlength = 0.9\n')
    (tmp_path / "m.toml").write_text('[[site]]\nname = "a"\nplan = "a.dxf"\nstorey = [1]\n'
                                     '[[vehicle]]\nname = "v"\nfile = "v.toml"\n')
    with pytest.raises(InputError) as err:
        read_manifest(tmp_path / "m.toml")
    assert err.value.where == "site[1].storey"
