"""Train files: strict reading, one-line errors naming the file and the key."""

import math

import pytest

from floorfit.articulated import is_train_file, load_train
from floorfit.errors import VehicleError
from floorfit.vehicles.loading import split_vehicle_file

GOOD = """name = "tug + cart"
[footprint]
outline = [[0.5, -0.3], [0.5, 0.3], [-0.3, 0.3], [-0.3, -0.3]]
margin = 0.02
[motion]
mode = "differential"
[cart]
width = 0.7
length = 1.2
axle_to_front = 0.75
hitch = [-0.35, 0.0]
tongue = 1.6
max_hitch_angle = 70
"""


def write(tmp_path, text, name="train.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_good_train_file(tmp_path):
    p = write(tmp_path, GOOD)
    train = load_train(p)
    assert train.name == "tug + cart"
    assert train.tractor.mode == "differential" and train.tractor.margin_m == 0.02
    assert train.hitch == (-0.35, 0.0) and not train.on_axle
    assert train.tongue_m == 1.6 and train.max_hitch_deg == 70.0
    assert train.cart_margin_m == 0.02                                   # defaults to the tractor's
    assert train.cart_outline.bounds == pytest.approx((-0.45, -0.35, 0.75, 0.35))
    assert train.cart_width_m == pytest.approx(0.7) and train.cart_length_m == pytest.approx(1.2)
    longer = train.with_tongue(2.4)                                      # stretched along its axis
    assert longer.tongue_m == 2.4 and longer.cart_outline.bounds == pytest.approx((-0.675, -0.35, 1.125, 0.35))
    tractor, t2 = split_vehicle_file(p)
    assert t2 == train and tractor == train.tractor
    d = train.describe()
    assert d["hitch_type"] == "off-axle" and d["tongue_m"] == 1.6


def test_plain_vehicle_file_is_not_a_train(tmp_path):
    p = write(tmp_path, GOOD.split("[cart]")[0], "robot.toml")
    vehicle, train = split_vehicle_file(p)
    assert train is None and vehicle.mode == "differential"
    assert is_train_file({"cart": {}}) and not is_train_file({"footprint": {}}) and not is_train_file([])
    with pytest.raises(VehicleError, match="missing \\[cart\\] table"):
        load_train(p)


@pytest.mark.parametrize("old,new,key,words", [
    ("tongue = 1.6", "tonge = 1.6", "cart.tonge", "did you mean 'tongue'"),
    ("hitch = [-0.35, 0.0]", "hitch = [-3.5, 0.0]", "cart.hitch", "from the tractor outline"),
    ("hitch = [-0.35, 0.0]", "hitch = [0.6, 0.0]", "cart.hitch", "ahead of the tractor's front"),
    ("hitch = [-0.35, 0.0]", "hitch = [-0.35]", "cart.hitch", "expected [x, y]"),
    ("tongue = 1.6", "tongue = 0", "cart.tongue", "tongue must be at least"),
    ("tongue = 1.6", "tongue = 1600", "cart.tongue", "not a plausible cart length"),
    ("max_hitch_angle = 70", "max_hitch_angle = 120", "cart.max_hitch_angle", "between 1 and 90"),
    ("max_hitch_angle = 70\n", "", "cart.max_hitch_angle", "missing required key"),
    ('mode = "differential"', 'mode = "fixed"', "motion.mode", "cannot tow"),
    ('mode = "differential"', 'mode = "car"', "motion.min_turn_radius", "min_turn_radius"),
    ("width = 0.7", "width = 700", "cart.outline", "not a plausible vehicle"),
    ("axle_to_front = 0.75", 'axle_to_front = "x"', "cart.axle_to_front", "expected a number"),
])
def test_bad_train_files_give_one_line_errors(tmp_path, old, new, key, words):
    assert old in GOOD
    p = write(tmp_path, GOOD.replace(old, new))
    with pytest.raises(VehicleError) as err:
        load_train(p)
    text = str(err.value)
    assert "\n" not in text
    assert str(p) in text and key in text and words in text


def test_unknown_top_level_key(tmp_path):
    p = write(tmp_path, GOOD.replace("[cart]", "[kart]\nx = 1\n[cart]"))
    with pytest.raises(VehicleError, match="unknown key 'kart' \\(did you mean 'cart'\\?\\)"):
        load_train(p)


def test_outline_and_rectangle_not_both(tmp_path):
    p = write(tmp_path, GOOD.replace("width = 0.7", "outline = [[0.7, -0.3], [0.7, 0.3], [-0.4, 0.3]]\nwidth = 0.7"))
    with pytest.raises(VehicleError, match="not both"):
        load_train(p)


def test_on_axle_hitch(tmp_path):
    train = load_train(write(tmp_path, GOOD.replace("hitch = [-0.35, 0.0]", "hitch = [0, 0]")))
    assert train.on_axle and train.hitch_offset_m == 0.0
    assert math.isclose(train.cart_reach_m, math.hypot(0.75 + 0.02, 0.35 + 0.02))
