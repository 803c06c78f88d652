"""``floorfit tow`` tells "no forward path exists at this resolution" (exit 1) from "the search gave
up at a limit" (exit 3, ``--max-expansions`` / ``--time-limit``)."""

import json

from test_articulated_site import TRAIN_TOML, _dxf_ring

from floorfit.cli import main


def test_tow_search_that_gives_up_is_not_a_proof(tmp_path, capsys):
    narrow = tmp_path / "narrow.dxf"
    _dxf_ring(narrow, 1.2)
    train = tmp_path / "train.toml"
    train.write_text(TRAIN_TOML, encoding="utf-8")
    out = tmp_path / "tow.json"
    args = ["tow", str(narrow), "--vehicle", str(train), "--start", "3.5,0.6,0", "--goal", "11.4,6,90"]
    code = main(args + ["--max-expansions", "1", "--json", str(out)])
    text = capsys.readouterr().out
    assert code == 3, text
    assert "not found within the search limits" in text and "--max-expansions" in text
    assert "NOT passable" not in text
    data = json.loads(out.read_text())
    assert data["status"] == "not-found-within-limits" and data["search"]["stopped_by"] == "max_expansions"
    # searched to the end: no forward path at this resolution, exit 1
    code = main(args + ["--json", str(out)])
    text = capsys.readouterr().out
    assert code == 1 and "no forward path exists at this resolution" in text
    data = json.loads(out.read_text())
    assert data["status"] == "not-passable" and data["search"]["stopped_by"] == "exhausted"
    assert main(args + ["--max-expansions", "0"]) == 2
