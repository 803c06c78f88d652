"""Fuzzing the DXF importer: mutated drawings either import or raise floorfit's own error.

Never another exception type, never a hang (each case runs under an alarm). The number of
cases is small in CI; set FLOORFIT_FUZZ_CASES (e.g. 5000) for a long run:

    FLOORFIT_FUZZ_CASES=5000 python -m pytest tests/test_fuzz_import.py -q

Every input that ever crashed the importer is kept in tests/fuzz_regressions/ and replayed.
"""

from __future__ import annotations

import io
import os
import signal
from pathlib import Path

import ezdxf
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from floorfit.errors import FloorfitError
from floorfit.plan.dxf import load_plan

HERE = Path(__file__).parent
REGRESSIONS = HERE / "fuzz_regressions"
CASES = int(os.environ.get("FLOORFIT_FUZZ_CASES", "60"))
CASE_SECONDS = 20


def _seed_synthetic() -> bytes:
    """A small drawing with the entity kinds the importer handles (invented geometry)."""
    doc = ezdxf.new("R2000", setup=False)
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (8000, 0), (8000, 5000), (0, 5000)], close=True, dxfattribs={"layer": "A-WALL"})
    msp.add_line((4000, 0), (4000, 2000), dxfattribs={"layer": "A-WALL"})
    msp.add_line((4000, 2900), (4000, 5000), dxfattribs={"layer": "A-WALL"})
    msp.add_arc((4000, 2000), 900, 0, 90, dxfattribs={"layer": "A-DOOR"})
    msp.add_line((4000, 2000), (4900, 2000), dxfattribs={"layer": "A-DOOR"})
    msp.add_circle((2000, 2500), 200, dxfattribs={"layer": "A-COLS"})
    msp.add_lwpolyline([(6000, 1000, 0, 0, 0.5), (7000, 1000), (7000, 1500)], dxfattribs={"layer": "A-EQPM"})
    blk = doc.blocks.new("CRATE")
    blk.add_lwpolyline([(0, 0), (600, 0), (600, 400), (0, 400)], close=True, dxfattribs={"layer": "0"})
    msp.add_blockref("CRATE", (5000, 3500), dxfattribs={"layer": "A-EQPM", "rotation": 30, "xscale": -1})
    msp.add_text("STORE", dxfattribs={"layer": "A-ANNO-TEXT", "insert": (1000, 4000), "height": 200})
    hatch = msp.add_hatch(dxfattribs={"layer": "A-COLS"})
    hatch.paths.add_polyline_path([(7200, 4000), (7600, 4000), (7600, 4400), (7200, 4400)], is_closed=True)
    stream = io.StringIO()
    doc.write(stream)
    return stream.getvalue().encode("utf-8")


def _seeds() -> list[bytes]:
    seeds = [_seed_synthetic()]
    demo = HERE.parent / "plans" / "harbourside-dc.dxf"
    if demo.exists():
        seeds.append(demo.read_bytes())
    # a real third-party drawing, read in place (plans-real #9, LGPL-3.0-or-later; not copied)
    real = HERE.parents[1] / "shared" / "plans-real" / "PedestrianDynamics__jupedsim__Gallery.dxf"
    if real.exists():
        seeds.append(real.read_bytes())
    return seeds


SEEDS = _seeds()


class _Timeout(Exception):
    pass


def _alarm(_sig, _frame):
    raise _Timeout()


def _import_bytes(data: bytes, tmp: Path) -> None:
    path = tmp / "case.dxf"
    path.write_bytes(data)
    old = signal.signal(signal.SIGALRM, _alarm)
    signal.alarm(CASE_SECONDS)
    try:
        load_plan(path)
    except FloorfitError:
        pass                      # a clear, one-line refusal is a correct answer
    except _Timeout:
        _keep(data, "hang")
        pytest.fail(f"importer did not finish within {CASE_SECONDS} s (input kept in {REGRESSIONS})")
    except Exception as exc:     # noqa: BLE001 - the point of the test
        name = _keep(data, type(exc).__name__)
        raise AssertionError(f"importer raised {type(exc).__name__}: {exc} (input kept as {name})") from exc
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)


def _keep(data: bytes, why: str) -> str:
    import hashlib
    name = f"{why}-{hashlib.sha256(data).hexdigest()[:12]}.dxf"
    if os.environ.get("FLOORFIT_FUZZ_KEEP", "1") == "1":
        REGRESSIONS.mkdir(exist_ok=True)
        (REGRESSIONS / name).write_bytes(data)
    return name


# --- mutations ------------------------------------------------------------------------
def _lines(data: bytes) -> list[bytes]:
    return data.split(b"\n")


@st.composite
def mutated(draw):
    data = draw(st.sampled_from(SEEDS))
    kind = draw(st.sampled_from(["flip", "truncate", "swap", "value", "section", "dup"]))
    if kind == "flip":
        buf = bytearray(data)
        for _ in range(draw(st.integers(1, 20))):
            i = draw(st.integers(0, len(buf) - 1))
            buf[i] ^= draw(st.integers(1, 255))
        return bytes(buf)
    if kind == "truncate":
        return data[:draw(st.integers(0, len(data) - 1))]
    lines = _lines(data)
    if kind == "swap":      # swap two lines: group codes with values, values with values
        for _ in range(draw(st.integers(1, 5))):
            i = draw(st.integers(0, len(lines) - 1))
            j = draw(st.integers(0, len(lines) - 1))
            lines[i], lines[j] = lines[j], lines[i]
        return b"\n".join(lines)
    if kind == "value":     # replace a value line with a hostile value
        bad = draw(st.sampled_from([b"1e300", b"-1e300", b"nan", b"inf", b"", b"999999999999", b"-0",
                                    b"\xff\xfe", b"<script>alert(1)</script>", b"=cmd|' /C calc'!A0", b"0" * 500]))
        for _ in range(draw(st.integers(1, 8))):
            i = draw(st.integers(0, len(lines) - 1))
            if i % 2 == 1 or draw(st.booleans()):
                lines[i] = bad
        return b"\n".join(lines)
    if kind == "section":   # delete one section
        starts = [i for i, ln in enumerate(lines) if ln.strip() == b"SECTION"]
        if not starts:
            return data
        s = draw(st.sampled_from(starts))
        e = next((i for i in range(s, len(lines)) if lines[i].strip() == b"ENDSEC"), len(lines) - 1)
        return b"\n".join(lines[:max(0, s - 1)] + lines[e + 1:])
    # dup: repeat a random run of lines (duplicate handles, nested structures)
    i = draw(st.integers(0, len(lines) - 2))
    j = draw(st.integers(i + 1, min(len(lines), i + 400)))
    return b"\n".join(lines[:j] + lines[i:j] + lines[j:])


@settings(max_examples=CASES, deadline=None, derandomize=os.environ.get("FLOORFIT_FUZZ_RANDOM") != "1",
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                 HealthCheck.function_scoped_fixture])
@given(data=mutated())
def test_mutated_drawings_import_or_refuse_cleanly(data, tmp_path):
    _import_bytes(data, tmp_path)


@pytest.mark.parametrize("path", sorted(REGRESSIONS.glob("*.dxf")), ids=lambda p: p.name)
def test_kept_crash_inputs_now_import_or_refuse_cleanly(path, tmp_path):
    _import_bytes(path.read_bytes(), tmp_path)


def test_seeds_import():
    assert SEEDS, "no seed drawings"
