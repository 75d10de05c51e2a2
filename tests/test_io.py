"""Files at the edge: the one CSV table reader, atomic writes, hypothesis files written and
read back, and Inputs reading each data file once.

Sources: RFC 4180 (CSV quoting of fields holding commas and quotes); the contract
(../shared/interface.md) for the file formats.
"""

import numpy as np
import pytest

from torque import io as tio
from torque.errors import InputError
from torque.forces import build_terms
from torque.hypothesis import hypothesis_from_dict
from torque.io import inputs as inputs_module

from .conftest import here

DEMO = here().parent / "polygons_demo"


def test_table_reader_names_the_file_line_and_column(tmp_path):
    p = tmp_path / "t.csv"
    p.write_text("# a comment\nLon,lat,age_myr\n1,2,3\n4,five,6\n7,8,\n")
    with pytest.raises(InputError, match="has no column 'depth'") as info:
        tio.read_table(p, ("lon", "depth"), comments=True)
    assert str(p) in str(info.value)
    t = tio.read_table(p, ("lon", "lat"), comments=True)
    assert t.header == ["lon", "lat", "age_myr"] and len(t) == 3
    with pytest.raises(InputError, match="lat is 'five', not a number") as info:
        t.numbers("lat")
    assert "line 3" in str(info.value)
    np.testing.assert_array_equal(t.numbers("age_myr", blank=np.nan)[:2], [3.0, 6.0])
    assert np.isnan(t.numbers("age_myr", blank=np.nan)[2])
    with pytest.raises(InputError, match="age_myr is '', not a number"):
        t.numbers("age_myr")


def test_csv_written_and_read_back_with_quoted_text(tmp_path):
    # RFC 4180: a field holding a comma or a quote is quoted, quotes doubled
    names = np.array(['plain', 'with, comma', 'say "hi"'], dtype=object)
    x = np.array([1.0, 2.5e-20, -3.0])
    tio.write_csv(tmp_path / "o.csv", {"name": names, "x": x, "n": np.arange(3)})
    t = tio.read_table(tmp_path / "o.csv", ("name", "x", "n"))
    assert t.text("name") == list(names)
    np.testing.assert_array_equal(t.numbers("x"), x)
    assert (tmp_path / "o.csv").read_text().splitlines()[2] == '"with, comma",2.5e-20,1'


def test_points_out_of_range_are_refused(tmp_path):
    p = tmp_path / "pts.csv"
    p.write_text("lon,lat\n10,20\n10,95\n")
    with pytest.raises(InputError, match="out of range") as info:
        tio.read_points(p)
    assert "line 3" in str(info.value)


def test_an_atomic_write_that_fails_leaves_the_old_file(tmp_path):
    p = tmp_path / "keep.txt"
    p.write_text("old")
    with pytest.raises(RuntimeError):
        with tio.atomic_write(p) as fh:
            fh.write("new, half")
            raise RuntimeError("interrupted")
    assert p.read_text() == "old" and [x.name for x in tmp_path.iterdir()] == ["keep.txt"]


def test_a_hypothesis_written_is_read_back_the_same(tmp_path):
    forces = [{"kind": "ridge", "coefficient": 1.0},
              {"kind": "slab", "coefficient": "free", "bounds": [0.0, 1.0], "age_myr": 60.0},
              {"kind": "drag", "region": "ocean", "coefficient": "free"}]
    spread = {"expansivity": {"normal": 2e-06}}
    tio.write_hypothesis(tmp_path / "h.toml", "a test", forces, spread, "written by a test")
    h = tio.load_hypothesis(tmp_path / "h.toml")
    assert h.name == "a test" and h.labels == ["ridge", "slab", "drag_ocean"]
    assert h.forces[1].bounds == (0.0, 1.0) and h.forces[1].options["age_myr"] == 60.0
    assert h.spread == {"expansivity": ("normal", 2e-06)}
    assert (tmp_path / "h.toml").read_text().startswith("# written by a test\n")


def test_inputs_read_each_file_once_for_every_hypothesis(monkeypatch):
    calls = {"ages": 0, "continents": 0}
    real_ages, real_cont = inputs_module.read_ages, inputs_module.read_continents

    def ages(path):
        calls["ages"] += 1
        return real_ages(path)

    def continents(path, winding):
        calls["continents"] += 1
        return real_cont(path, winding)
    monkeypatch.setattr(inputs_module, "read_ages", ages)
    monkeypatch.setattr(inputs_module, "read_continents", continents)
    data = tio.Inputs.load(DEMO / "world.toml")
    omega = tio.read_motions(DEMO / "motions.csv").for_world(data.world)
    terms = []
    for name in ("continental_drag", "ridge_slab_drag", "ridge_drag"):
        hyp = tio.load_hypothesis(DEMO / "hypotheses" / f"{name}.toml")
        terms.append(build_terms(data.context(hyp, omega)))
    assert calls == {"ages": 1, "continents": 1}
    # the grid's nodes were located once and every hypothesis used the same labels
    assert data.node_plates(data.ages) is data.node_plates(data.ages)
    # and the same terms come out as from a fresh read
    again = tio.compute_torques(tio.load_world(DEMO / "world.toml"),
                                tio.load_hypothesis(DEMO / "hypotheses" / "ridge_drag.toml"),
                                omega)
    for a, b in zip(terms[2], again):
        np.testing.assert_array_equal(a.driving, b.driving)


def test_a_data_file_no_term_needs_is_never_read(tmp_path):
    # the demo world with an age grid that is not a grid at all: a hypothesis with edge
    # ridge push and drag never reads it; one with distributed ridge push says what is wrong
    for f in ("plates.geojson", "boundaries.geojson", "continents.geojson"):
        (tmp_path / f).write_text((DEMO / f).read_text())
    (tmp_path / "ages.nc").write_text("not a grid")
    (tmp_path / "world.toml").write_text(
        'plates = "plates.geojson"\nboundaries = "boundaries.geojson"\n'
        'continents = "continents.geojson"\nages = "ages.nc"\n')
    data = tio.Inputs.load(tmp_path / "world.toml")
    edge = hypothesis_from_dict({"force": [{"kind": "ridge", "form": "edge",
                                            "coefficient": 1.0}, {"kind": "drag"}]})
    assert len(build_terms(data.context(edge))) == 2
    dist = hypothesis_from_dict({"force": [{"kind": "ridge", "coefficient": 1.0}]})
    with pytest.raises(InputError, match="not a NetCDF file"):
        build_terms(data.context(dist))
