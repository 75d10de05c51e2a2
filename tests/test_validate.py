"""World files and ``torque check``: contract keys, derived boundaries, and every bad input.

Each bad input must end with exit status 2 and one message on stderr naming the file, the
feature or plate and what is wrong; never a traceback.
"""

import json

import numpy as np
import pytest

from torque import sphere
from torque.validate import require_valid
from torque.io import load_world

from .conftest import assert_refused, hemispheres_file, line_feature, plate_feature
from .worlds import voronoi_rings

NORTH = [[0, 0], [120, 0], [240, 0], [0, 0]]
SOUTH = [[0, 0], [240, 0], [120, 0], [0, 0]]

def test_check_json_has_the_contract_keys(voronoi_world_file, cli):
    # Contract (shared/interface.md): radius_m, total_area_m2, plates[{plate, area_m2}],
    # problems. A Voronoi tiling covers 4 pi R^2 exactly (definition of a tiling).
    path, _ = voronoi_world_file
    status, out, err = cli("check", path, "--json")
    assert status == 0, err
    d = json.loads(out)
    assert d["radius_m"] == 6371e3
    assert d["total_area_m2"] == pytest.approx(4 * np.pi * 6371e3**2, rel=1e-9)
    assert [p["plate"] for p in d["plates"]] == [f"P{i}" for i in range(12)]
    assert all(p["area_m2"] > 0 for p in d["plates"])
    assert d["problems"] == []
    assert d["boundaries"]["derived"] is True


def test_human_summary(voronoi_world_file, cli):
    path, _ = voronoi_world_file
    status, out, _ = cli("check", path)
    assert status == 0
    assert "12 plates" in out and "no problems found" in out


def test_boundaries_file_on_shared_edges(write_world, cli):
    path = hemispheres_file(write_world, [
        line_feature([[0, 0], [120, 0], [240, 0], [360, 0]], kind="ridge", left="Upper",
                     right="Lower")])
    status, out, err = cli("check", path, "--json")
    assert status == 0, err
    d = json.loads(out)
    assert d["problems"] == []
    # length of the equator, 2 pi R (closed form)
    assert d["boundaries"]["length_m_by_kind"]["ridge"] == pytest.approx(2 * np.pi * 6371e3)


def test_boundary_off_the_shared_edge_is_a_warning_with_distance(write_world, cli):
    # 0.1 degree of latitude on a 6371 km sphere is 11.1 km (arc length R * angle).
    path = hemispheres_file(write_world, [
        line_feature([[0, 0.1], [60, 0.1]], kind="transform", left="Upper", right="Lower")])
    status, out, _ = cli("check", path, "--json")
    assert status == 0
    (p,) = [q for q in json.loads(out)["problems"] if "from the edge" in q["message"]]
    assert p["severity"] == "warning" and "11.1 km" in p["message"]


def test_swapped_left_and_right_is_an_error(write_world, cli):
    path = hemispheres_file(write_world, [
        line_feature([[0, 0], [60, 0]], kind="ridge", left="Lower", right="Upper")])
    status, out, err = cli("check", path)
    assert status == 2
    assert "left and right are swapped" in out and "boundaries.geojson" in out
    assert "error" in err


# ---- bad input: files and keys ----------------------------------------------------------
def assert_bad(result, *words):
    return assert_refused(result, None, *words)


def test_missing_world_file(cli, tmp_path):
    assert_bad(cli("check", tmp_path / "nope.toml"), "nope.toml", "not found")


def test_malformed_toml(write_world, cli):
    path = hemispheres_file(write_world, extra="radius_km = = 3\n")
    assert_bad(cli("check", path), "world.toml", "not valid TOML")


def test_unknown_world_key(write_world, cli):
    path = hemispheres_file(write_world, extra="radious_km = 6000\n")
    assert_bad(cli("check", path), "world.toml", "'radious_km'", "valid keys")


def test_missing_data_file(write_world, cli):
    path = hemispheres_file(write_world, extra='ages = "ages.nc"\n')
    assert_bad(cli("check", path), "world.toml", "'ages'", "does not exist")


def test_plates_key_required(tmp_path, cli):
    (tmp_path / "w.toml").write_text("radius_km = 6000.0\n")
    assert_bad(cli("check", tmp_path / "w.toml"), "w.toml", "'plates' is required")


def test_bad_radius(write_world, cli):
    path = hemispheres_file(write_world, extra="radius_km = -5\n")
    assert_bad(cli("check", path), "radius_km must be a positive number")


def test_malformed_json(write_world, cli):
    path = write_world(None, raw_plates='{"type": "FeatureCollection", "features": [')
    assert_bad(cli("check", path), "plates.geojson", "not valid JSON", "line 1")


def test_feature_without_plate_name(write_world, cli):
    f = plate_feature("x", [NORTH])
    del f["properties"]["plate"]
    path = write_world([f, plate_feature("Lower", [SOUTH])])
    assert_bad(cli("check", path), "plates.geojson", "feature 0", "properties.plate")


def test_wrong_geometry_type(write_world, cli):
    f = {"type": "Feature", "properties": {"plate": "Dot"},
         "geometry": {"type": "Point", "coordinates": [0, 0]}}
    path = write_world([f])
    assert_bad(cli("check", path), "feature 0", "'Dot'", "Polygon or MultiPolygon")


def test_unknown_boundary_kind(write_world, cli):
    path = hemispheres_file(write_world, [line_feature([[0, 0], [60, 0]], kind="rift",
                                                  left="Upper", right="Lower")])
    assert_bad(cli("check", path), "boundaries.geojson", "feature 0", "'rift'",
               "ridge, subduction")


# ---- bad input: problems that check lists (exit 2, all of them reported) -------------------
def check_problems(cli, path):
    status, out, err = cli("check", path, "--json")
    assert status == 2 and "Traceback" not in err
    assert "error" in err and str(path) in err
    return [p for p in json.loads(out)["problems"] if p["severity"] == "error"]


def test_duplicate_plate_names(write_world, cli):
    path = write_world([plate_feature("Twin", [NORTH]), plate_feature("Twin", [SOUTH])])
    probs = check_problems(cli, path)
    assert any("'Twin' is used again" in p["message"] and p["feature"] == 1 for p in probs)


def test_ring_with_too_few_vertices(write_world, cli):
    path = write_world([plate_feature("Upper", [NORTH]),
                        plate_feature("Lower", [[[0, 0], [10, 0], [0, 0]]])])
    probs = check_problems(cli, path)
    assert any("2 distinct vertices" in p["message"] and p["plate"] == "Lower" for p in probs)


def test_consecutive_antipodal_vertices(write_world, cli):
    path = write_world([plate_feature("Lower", [SOUTH]),
                        plate_feature("Upper", [[[0, 0], [180, 0], [90, 45], [0, 0]]])])
    probs = check_problems(cli, path)
    assert any("antipodal" in p["message"] and p["plate"] == "Upper" for p in probs)


def test_self_intersecting_ring(write_world, cli):
    bowtie = [[0, 0], [10, 10], [10, 0], [0, 10], [0, 0]]
    path = write_world([plate_feature("Bow", [bowtie])])
    probs = check_problems(cli, path)
    assert any("crosses itself" in p["message"] and p["plate"] == "Bow" for p in probs)


def test_file_with_no_usable_ring_says_why(write_world, cli):
    path = write_world([plate_feature("Upper", [[[0, 0], [180, 0], [90, 45], [0, 0]]])])
    assert_bad(cli("check", path), "plates.geojson", "no usable plate polygon", "antipodal",
               "'Upper'")


def test_nan_coordinate(write_world, cli):
    raw = json.dumps({"type": "FeatureCollection", "features": [
        plate_feature("Upper", [NORTH]),
        plate_feature("Lower", [[[0, 0], [240, 0], [120, float("nan")], [0, 0]]])]})
    path = write_world(None, raw_plates=raw)
    probs = check_problems(cli, path)
    assert any("not a finite number" in p["message"] and p["plate"] == "Lower"
               for p in probs)


def test_latitude_out_of_range(write_world, cli):
    path = write_world([plate_feature("Upper", [NORTH]),
                        plate_feature("Lower", [[[0, 0], [240, -95], [120, 0], [0, 0]]])])
    probs = check_problems(cli, path)
    assert any("latitude -95" in p["message"] and "[-90, 90]" in p["message"] for p in probs)


def test_swapped_lat_lon(write_world, cli):
    # written as [lat, lon]: latitudes of 100 with longitudes of at most 90
    path = write_world([plate_feature("Lower", [SOUTH]),
                        plate_feature("Upper", [[[10, 20], [30, 100], [50, 60], [10, 20]]])])
    probs = check_problems(cli, path)
    assert any("look like [lat, lon]" in p["message"] for p in probs)


def test_overlap_is_located_and_named(write_world, cli):
    # Two northern hemispheres and a southern one: everything north is covered twice.
    path = write_world([plate_feature("A", [NORTH]), plate_feature("B", [NORTH]),
                        plate_feature("C", [SOUTH])], extra='winding = "strict"\n')
    probs = check_problems(cli, path)
    assert any("sum to 1.5" in p["message"] for p in probs)
    over = [p for p in probs if "an overlap" in p["message"]]
    assert over and "'A', 'B'" in over[0]["message"] and over[0]["lat"] > 0


def test_gap_is_located(write_world, cli):
    gen, sv, rings = voronoi_rings(12, seed=3)
    path = write_world([plate_feature(f"P{i}", [r]) for i, r in enumerate(rings) if i != 4])
    probs = check_problems(cli, path)
    gaps = [p for p in probs if "a gap" in p["message"]]
    assert gaps
    # the gap is where the missing cell was: nearest generator of the reported point is 4
    p = sphere.lonlat_to_xyz(gaps[0]["lon"], gaps[0]["lat"])
    assert int(np.argmax(gen @ p)) == 4


def test_boundary_names_unknown_plate(write_world, cli):
    path = hemispheres_file(write_world, [line_feature([[0, 0], [60, 0]], kind="ridge",
                                                  left="Upper", right="Nowhere")])
    probs = check_problems(cli, path)
    assert any("'Nowhere' is not a plate" in p["message"] and p["feature"] == 0
               for p in probs)


def test_subduction_without_sinking_plate(write_world, cli):
    path = hemispheres_file(write_world, [line_feature([[0, 0], [60, 0]], kind="subduction",
                                                  left="Upper", right="Lower")])
    probs = check_problems(cli, path)
    assert any("must name its sinking plate" in p["message"] for p in probs)


def test_other_commands_refuse_a_broken_world(write_world):
    from torque.errors import InputError
    path = write_world([plate_feature("Twin", [NORTH]), plate_feature("Twin", [SOUTH])])
    with pytest.raises(InputError, match="'Twin' is used again.*torque check"):
        require_valid(load_world(path))


def test_unclassified_world_without_boundaries_file_has_neighbours(voronoi_world_file, cli):
    path, gen = voronoi_world_file
    _, out, _ = cli("check", path, "--json")
    plates = json.loads(out)["plates"]
    # degree of each Voronoi cell equals the number of its vertices (3-valent tiling)
    assert all(len(p["neighbours"]) == p["vertices"] for p in plates)


def test_continents_are_checked(write_world, cli, tmp_path):
    # Overlapping continents are an error; a continent edge running along a plate edge is a
    # warning (its clipping depends on rounding there).
    import json as _json
    box = [[10, 10], [30, 10], [30, 30], [10, 30], [10, 10]]
    shifted = [[20, 20], [40, 20], [40, 40], [20, 40], [20, 20]]
    path = hemispheres_file(write_world, extra='continents = "c.geojson"\n')
    fc = {"type": "FeatureCollection", "features": [plate_feature("a", [box]),
                                                    plate_feature("b", [shifted])]}
    (tmp_path / "c.geojson").write_text(_json.dumps(fc))
    status, out, err = cli("check", path, "--json")
    assert status == 2
    assert any("continents overlap" in p["message"] for p in json.loads(out)["problems"])
    on_edge = [[0, 0], [40, 0], [40, 20], [0, 20], [0, 0]]       # runs along the equator
    fc = {"type": "FeatureCollection", "features": [plate_feature("a", [on_edge])]}
    (tmp_path / "c.geojson").write_text(_json.dumps(fc))
    status, out, err = cli("check", path, "--json")
    probs = json.loads(out)["problems"]
    assert status == 0
    assert [p["severity"] for p in probs] == ["warning"]
    assert "run along plate edges" in probs[0]["message"]


def test_a_shared_edge_without_boundary_lines_is_reported(write_world, cli):
    # Half the equator has a ridge, the other half nothing: 20,015 km (pi R) of the edge the
    # two hemispheres share carry no boundary force (length of a half great circle).
    half = [[0, 0], [90, 0], [180, 0]]
    path = hemispheres_file(write_world, [line_feature(half, kind="ridge", left="Upper",
                                                       right="Lower")])
    status, out, err = cli("check", path, "--json")
    assert status == 0
    probs = [p for p in json.loads(out)["problems"] if "no boundary line" in p["message"]]
    assert len(probs) == 1 and "'Upper' and 'Lower'" in probs[0]["message"]
    km = float(probs[0]["message"].split(" km")[0].replace(",", ""))
    assert km == pytest.approx(np.pi * 6371.0, rel=2e-3)
    assert probs[0]["lon"] > 180 or probs[0]["lon"] < 0     # on the uncovered half
    # the whole equator covered: nothing to report
    full = hemispheres_file(write_world, [line_feature(half + [[270, 0], [360, 0]],
                                                       kind="ridge", left="Upper",
                                                       right="Lower")])
    status, out, err = cli("check", full, "--json")
    assert not [p for p in json.loads(out)["problems"] if "no boundary line" in p["message"]]


def test_every_command_gives_the_same_verdict_on_a_crossing_ring(write_world, tmp_path, cli):
    # A ring that crosses itself (it holds a bow tie, so the tiling's area sum still holds
    # when its neighbour is the rest of the sphere): check and every other command refuse it.
    bowtie = [[0, 0], [10, 10], [10, 0], [0, 10], [0, 0]]
    path = write_world([plate_feature("Bow", [bowtie]),
                        plate_feature("Rest", [[[0, 0], [0, 10], [10, 0], [10, 10], [0, 0]]])])
    status, out, err = cli("check", path)
    assert status == 2 and "crosses itself" in out
    (tmp_path / "m.csv").write_text("plate,lat,lon,rate\nBow,0,0,1\nRest,0,0,0\n")
    status, out, err = cli("field", path, tmp_path / "m.csv", "-o", tmp_path / "f.csv")
    assert status == 2 and "crosses itself" in err and not (tmp_path / "f.csv").exists()


def test_a_touch_within_the_vertex_tolerance_is_no_crossing():
    # A vertex 1e-7 degrees (about 1 cm) past the ring's own bottom edge makes two edges
    # cross it within 1 cm of that vertex: a pinch of rounding size, not a crossing, under
    # the default 5 m tolerance; with a tolerance of 0.1 mm it is a crossing.
    from torque.io import world_from_rings
    from torque.validate import ring_crossings
    ring = [(0, 0), (10, 0), (10, 10), (5, -1e-7), (0, 10)]
    loose = world_from_rings({"A": [ring]})
    assert len(ring_crossings(loose.geometry, tol_rad=loose.tolerance_rad)) == 0
    tight = world_from_rings({"A": [ring]}, vertex_tolerance_m=1e-4)
    assert len(ring_crossings(tight.geometry, tol_rad=tight.tolerance_rad)) == 2


def test_the_check_table_shows_each_plates_perimeter(cli):
    # the text table says what the JSON says (its exact perimeter, in km)
    import json
    from .conftest import here
    world = here().parent / "polygons_demo" / "world.toml"
    status, out, _ = cli("check", world)
    assert status == 0 and "perimeter km" in out
    doc = json.loads(cli("check", world, "--json")[1])
    first = doc["plates"][0]
    line = next(l for l in out.splitlines() if l.startswith(first["plate"] + " "))
    assert f"{first['perimeter_m'] / 1e3:,.0f}" in line
