"""Plate models as published: outlines with repeated vertices and zero-width spikes, boundary
files with text attributes, slabs without ages.

Sources: a spike (an outline that runs out and back along the same arcs) encloses no area,
so removing it leaves the plate's area unchanged; areas from GeographicLib through
pyproj.Geod (Karney 2013, J. Geodesy 87).
"""

import csv
import json

import numpy as np
import pytest
from pyproj import Geod

from torque import compute_torques, sphere

from torque import polygons
from torque.hypothesis import hypothesis_from_dict
from torque.io import load_world
from torque.rings import remove_spikes

from .conftest import line_feature, plate_feature

NORTH = [[0, 0], [120, 0], [240, 0], [0, 0]]
SOUTH = [[0, 0], [240, 0], [120, 0], [0, 0]]
# the northern hemisphere with a spike of two arcs out of (120, 0) to (120, -20), and a
# repeated vertex: digitised as real outlines sometimes are
SPIKED = [[0, 0], [120, 0], [120, -10], [120, -20], [120, -10], [120, 0], [120, 0],
          [240, 0], [0, 0]]


@pytest.mark.parametrize("ll, apexes", [
    ([(0, 0), (10, 0), (10, 10), (0, 10)], []),
    ([(0, 0), (5, 5), (0, 0), (10, 0), (10, 10), (0, 10)], [1]),
    # a spike across the ring's seam: its tip is the first vertex
    ([(5, 5), (0, 0), (10, 0), (10, 10), (0, 10), (0, 0)], [0]),
])
def test_spikes_are_found_wherever_they_are(ll, apexes):
    xyz = sphere.lonlat_to_xyz(*np.array(ll, float).T)
    kept, found, length = remove_spikes(xyz)
    assert sorted(found) == apexes
    assert len(kept) == 4
    area = polygons.ring_left_area(xyz[kept], [0, len(kept)])[0]
    ref, _ = Geod(a=1, b=1).polygon_area_perimeter(*np.array(ll, float)[kept].T)
    assert area == pytest.approx(abs(ref), rel=1e-9)


def test_a_spiked_outline_is_repaired_with_a_warning(write_world, cli):
    path = write_world([plate_feature("Upper", [SPIKED]), plate_feature("Lower", [SOUTH])],
                       [line_feature([[0, 0], [120, 0], [240, 0], [360, 0]], kind="ridge",
                                     left="Upper", right="Lower"),
                        line_feature([[120, 0], [120, -10], [120, -20]], kind="transform",
                                     left="Upper", right="Lower")],
                       extra='winding = "strict"\n')
    status, out, err = cli("check", path)
    assert status == 0, err
    assert "a zero-width spike was removed" in out and "plate 'Upper'" in out
    assert "2 arc(s)" in out and "feature 1: 2 vertex(es)" in out
    w = load_world(path)
    # the spike had no area: each plate is a hemisphere, exactly
    np.testing.assert_allclose(w.area_m2, 2 * np.pi * w.radius_m ** 2, rtol=1e-12)
    # the transform along the spike is gone; the ridge is kept
    assert [b.kind for b in w.boundaries] == ["ridge"]


def test_text_properties_pass_through(write_world, tmp_path, cli):
    # real GIS files carry text attributes; only the documented numeric keys are read
    path = write_world([plate_feature("Upper", [NORTH]), plate_feature("Lower", [SOUTH])],
                       [line_feature([[0, 0], [120, 0], [240, 0], [360, 0]], kind="subduction",
                                     left="Upper", right="Lower", subducting="Lower",
                                     name="a trench", source_class="SUB", slab_age_myr=70.0)],
                       extra='winding = "strict"\n')
    w = load_world(path)
    assert w.boundaries[0].properties == {"name": "a trench", "source_class": "SUB",
                                          "slab_age_myr": 70.0}
    motions = tmp_path / "m.csv"
    motions.write_text("plate,lat,lon,rate\nUpper,0,0,0\nLower,0,90,0.5\n")
    out = tmp_path / "b.geojson"
    status, _, err = cli("boundaries", path, motions, "--geojson", out, "-o", tmp_path / "b.csv")
    assert status == 0, err
    props = json.loads(out.read_text())["features"][0]["properties"]
    assert props["source_class"] == "SUB" and props["name"] == "a trench"
    # a documented key must still be a number
    bad = write_world([plate_feature("Upper", [NORTH]), plate_feature("Lower", [SOUTH])],
                      [line_feature([[0, 0], [120, 0]], kind="subduction", left="Upper",
                                    right="Lower", subducting="Lower", slab_age_myr="old")],
                      name="bad.toml")
    status, _, err = cli("check", bad)
    assert status == 2 and "'slab_age_myr' must be a positive number" in err


def test_a_slab_without_any_age_takes_the_default_and_says_why():
    # no age grid, no motions to synthesise ages, no age on the line or the entry
    from torque.world import Boundary
    from .worlds import hemispheres
    trench = Boundary("subduction", "Upper", "Lower",
                      sphere.lonlat_to_xyz(np.array([0.0, 60.0, 120.0]), np.zeros(3)),
                      subducting="Lower")
    w = hemispheres([trench])
    (term,) = compute_torques(w, hypothesis_from_dict({"force": [{"kind": "slab"}]}))
    assert "default age 60 Myr used on" in term.notes[0]
    assert "no motions were given" in term.notes[0] and "Lower" in term.notes[0]
    (given,) = compute_torques(w, hypothesis_from_dict(
        {"force": [{"kind": "slab", "age_myr": 60.0}]}))
    np.testing.assert_array_equal(term.driving, given.driving)
    assert "entry age 60 Myr" in given.notes[0]


def test_motions_relative_to_a_fixed_plate_are_flagged(tmp_path, cli):
    # published motions often hold one plate fixed; drag needs the mantle's frame
    from .conftest import here
    demo = here().parent / "polygons_demo"
    rel = tmp_path / "rel.csv"
    assert cli("frame", demo / "world.toml", demo / "motions.csv",
               "--to", "plate:Vessane", "-o", rel)[0] == 0
    hyp = demo / "hypotheses" / "ridge_drag.toml"
    status, _, err = cli("fit", demo / "world.toml", hyp, rel, "-o", tmp_path / "f.json")
    assert status == 0
    assert "plate 'Vessane' is exactly at rest" in err and "--free-frame" in err
    status, _, err = cli("fit", demo / "world.toml", hyp, demo / "motions.csv",
                         "-o", tmp_path / "g.json")
    assert status == 0 and "at rest" not in err


def test_boundary_rows_name_their_source_feature_when_loading_drops_a_line(write_world,
                                                                            tmp_path, cli):
    # Feature 0 runs along the spike and is trimmed to nothing on loading, so the world's
    # first line is feature 1: every row must still name the feature it samples, so that
    # the CSV joins back to the GeoJSON (issue 25; the join itself is the check).
    path = write_world([plate_feature("Upper", [SPIKED]), plate_feature("Lower", [SOUTH])],
                       [line_feature([[120, 0], [120, -10], [120, -20]], kind="transform",
                                     left="Upper", right="Lower"),
                        line_feature([[0, 0], [120, 0], [240, 0], [360, 0]], kind="ridge",
                                     left="Upper", right="Lower", name="the ridge")],
                       extra='winding = "strict"\n')
    assert [b.feature for b in load_world(path).boundaries] == [1]
    motions = tmp_path / "m.csv"
    motions.write_text("plate,lat,lon,rate\nUpper,0,0,0\nLower,0,90,0.5\n")
    out, gj = tmp_path / "b.csv", tmp_path / "b.geojson"
    for extra in ([], ["--classify"]):
        status, _, err = cli("boundaries", path, motions, "-o", out, "--geojson", gj, *extra)
        assert status == 0, err
        rows = list(csv.DictReader(out.open()))
        source = json.loads((tmp_path / "boundaries.geojson").read_text())["features"]
        for r in rows:
            props = source[int(r["feature"])]["properties"]
            assert (props["kind"], props["left"], props["right"]) == (r["kind"], r["left"],
                                                                      r["right"])
        assert {r["line"] for r in rows} == {"0"}          # the world's line, after the drop
        written = json.loads(gj.read_text())["features"]
        assert [f["properties"]["feature"] for f in written] == [1]
        assert written[0]["properties"]["name"] == "the ridge"
