"""Hypotheses: force entries checked against their kind, physics, spreads, and the cooling
table a hypothesis implies.

Sources: GDH1 (Stein and Stein 1992, Nature 359): sea-floor depth 2600 + 365 t^0.5 m for
t < 20 Myr and 5651 - 2473 exp(-0.0278 t) m beyond (coefficients from memory of the
paper's table), which the plate model with the default physics reproduces.
"""

import numpy as np
import pytest

from torque.errors import InputError
from torque.forces import KINDS
from torque.hypothesis import Hypothesis, cooling_table, hypothesis_from_dict, slab_depth_km
from torque.lithosphere import Cooling, Physics


def test_every_kind_of_the_contract_is_read():
    # ../shared/interface.md lists these kinds; "trench" is read under its new name, and
    # the tool adds its own ("gpe": continental potential energy)
    contract = {"ridge", "slab", "suction", "drag", "mantle", "transform", "trench",
                "collision"}
    assert set(KINDS) == contract - {"trench"} | {"subduction_resistance", "gpe"}
    for kind in contract:
        entry = {"kind": kind, "coefficient": 1.0}
        assert hypothesis_from_dict({"force": [entry]}).forces[0].kind in KINDS


def test_the_old_name_of_a_kind_works_with_a_note_and_keeps_its_label():
    from torque.hypothesis import RENAMED_KINDS
    old = hypothesis_from_dict({"force": [{"kind": "trench"}]}).forces[0]
    new = hypothesis_from_dict({"force": [{"kind": "subduction_resistance"}]}).forces[0]
    assert RENAMED_KINDS["trench"] == "subduction_resistance"
    assert old.kind == new.kind == "subduction_resistance"
    assert old.label == "trench" and new.label == "subduction_resistance"
    assert "now called 'subduction_resistance'" in old.note and new.note is None


def test_labels_coefficients_and_bounds():
    h = hypothesis_from_dict({"name": "h", "force": [
        {"kind": "ridge", "coefficient": 1.0},
        {"kind": "drag", "region": "ocean", "bounds": [0.0, 1e16]},
        {"kind": "mantle", "region": "continent", "coefficient": 2e14},
        {"kind": "trench", "component": "strike"}]})
    assert h.labels == ["ridge", "drag_ocean", "mantle_continent", "trench"]
    assert h.free_labels == ["drag_ocean", "trench"]
    assert h.forces[1].bounds == (0.0, 1e16)
    assert h.forces[3].options == {"component": "strike"}
    assert h.forces[0].options == {"form": "distributed"}


@pytest.mark.parametrize("entry, words", [
    ({"kind": "gravity"}, ["unknown force kind 'gravity'", "valid kinds"]),
    ({"kind": "drag", "viscosity": 1e20}, ["unknown key(s) 'viscosity'", "region"]),
    ({"kind": "drag", "region": "mantle"}, ["region must be one of"]),
    ({"kind": "slab", "depth_km": -1.0}, ["depth_km must be positive"]),
    ({"kind": "slab", "bounds": [1.0, 0.0]}, ["low > high"]),
    ({"kind": "slab", "coefficient": 0.5, "bounds": [0.0, 1.0]}, ["this one is fixed"]),
    ({"kind": "slab", "coefficient": "half"}, ['a number or "free"']),
])
def test_bad_entries_say_what_is_wrong(entry, words):
    with pytest.raises(InputError) as info:
        hypothesis_from_dict({"force": [entry]}, file="h.toml")
    for w in words:
        assert w in str(info.value)
    assert "h.toml" in str(info.value) and "[[force]] 1" in str(info.value)


def test_two_entries_with_one_label_are_refused():
    with pytest.raises(InputError, match="two forces have the label 'drag_all'"):
        hypothesis_from_dict({"force": [{"kind": "drag"}, {"kind": "drag"}]})


def test_cooling_table_follows_gdh1_and_the_slab_depth():
    h = hypothesis_from_dict({"force": [{"kind": "slab", "depth_km": 410.0}]})
    assert slab_depth_km(h) == 410.0
    assert slab_depth_km(Hypothesis("none", Physics(), ())) == 660.0
    ages = np.array([5.0, 10.0, 40.0, 80.0, 150.0])
    rows = cooling_table(h, ages)
    gdh1 = np.where(ages < 20, 2600 + 365 * np.sqrt(ages), 5651 - 2473 * np.exp(-0.0278 * ages))
    np.testing.assert_allclose([r["depth_m"] for r in rows], gdh1, rtol=5e-3)
    c = Cooling(Physics())
    np.testing.assert_allclose([r["slab_pull_n_m"] for r in rows], c.slab_pull_n_m(ages, 410.0),
                               rtol=1e-12)
    # a shallower slab pulls less than one reaching 660 km
    assert all(r["slab_pull_n_m"] < float(c.slab_pull_n_m(a, 660.0)) for r, a in zip(rows, ages))
