"""Relative motion along boundaries, and boundary kinds from it.

Sources: the speed of a point at angular distance D from an Euler pole is w R sin D
(Fowler 2005, The Solid Earth, sec. 2.4; Cox and Hart 1986, Plate Tectonics: How It Works,
ch. 4); line lengths on a sphere from GeographicLib through pyproj.Geod (Karney 2013).
"""

import numpy as np
import pytest
from pyproj import Geod

from torque import sphere
from torque.euler import RAD_S_PER_DEG_MYR, pole_to_vector
from torque.grids import AgeGrid
from torque.margins import boundary_motion, classify, sample_boundaries, with_kinds
from torque.world import Boundary

from .worlds import hemispheres

R = 6371e3


def test_samples_cover_each_line_once():
    # the lengths the samples stand for add up to the line's geodesic length
    world = hemispheres()
    samples = sample_boundaries(world.boundaries, 50e3 / R)
    lon, lat = sphere.xyz_to_lonlat(world.boundaries[0].xyz)
    _, _, dist = Geod(a=R, b=R).inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
    assert samples.length.sum() * R == pytest.approx(dist.sum(), rel=1e-12)
    assert samples.length.max() * R <= 50e3 * (1 + 1e-12)


def test_opening_rate_is_w_r_sin_d_and_sets_the_kind():
    # Lower turns about a pole on the equator (lon 90): along the equator the relative
    # motion is purely boundary-normal, of speed w R sin D with D the distance to the pole;
    # Lower moves south (away from Upper) between lon -90 and 90.
    w = 1.0 * RAD_S_PER_DEG_MYR
    east = Boundary("unclassified", "Upper", "Lower",
                    sphere.lonlat_to_xyz(np.array([-60.0, 0.0, 60.0]), np.zeros(3)))
    world = hemispheres([east])
    for sign, kind in ((1.0, "ridge"), (-1.0, "subduction")):
        omega = np.array([[0, 0, 0], pole_to_vector(0.0, 90.0, sign * 1.0)])
        samples = sample_boundaries(world.boundaries, 100e3 / R)
        motion = boundary_motion(world, omega, samples)
        lon, _ = sphere.xyz_to_lonlat(samples.xyz)
        D = np.radians(np.abs(((lon - 90.0) + 180.0) % 360.0 - 180.0))
        speed = w * R * np.sin(D) * 1e3 * 3.15576e7                       # mm/yr
        np.testing.assert_allclose(np.abs(motion.opening_mm_yr), speed, atol=1e-9)
        np.testing.assert_allclose(motion.along_mm_yr, 0.0, atol=1e-9)
        assert np.all(sign * motion.opening_mm_yr > 0)
        kinds, _ = classify(world, motion)
        assert kinds == [kind]
    # a rotation about the north pole slides the plates past each other: a transform
    world = hemispheres()
    omega = np.array([[0, 0, 0], pole_to_vector(90.0, 0.0, 1.0)])
    motion = boundary_motion(world, omega, sample_boundaries(world.boundaries, 100e3 / R))
    np.testing.assert_allclose(motion.obliquity_deg, 90.0, atol=1e-9)
    kinds, sinking = classify(world, motion)
    assert kinds == ["transform"] and sinking == [None]


def test_the_older_side_sinks():
    # A closing boundary between old (north) and young (south) sea floor: the north sinks.
    half = [(0, 0), (60, 0), (120, 0)]
    line = Boundary("unclassified", "Upper", "Lower", sphere.lonlat_to_xyz(*np.array(half).T))
    world = hemispheres([line])
    omega = np.array([pole_to_vector(0.0, 150.0, 1.0), [0, 0, 0]])
    samples = sample_boundaries(world.boundaries, 100e3 / R)
    motion = boundary_motion(world, omega, samples)
    assert np.all(motion.opening_mm_yr < 0)                            # closing
    lon = np.arange(-179.5, 180, 1.0)
    lat = np.arange(-89.5, 90, 1.0)
    age = np.where(lat[:, None] > 0, 120.0, 10.0) * np.ones((1, len(lon)))
    kinds, sinking = classify(world, motion, AgeGrid(lon, lat, age))
    assert kinds == ["subduction"] and sinking == ["Upper"]
    # without ages the sinking plate is not guessed
    assert classify(world, motion)[1] == [None]
    new = with_kinds(world, kinds, sinking)
    assert new[0].kind == "subduction" and new[0].subducting == "Upper"


def test_a_line_is_split_where_its_kind_changes():
    # Lower turns about a pole on the equator at lon 90: it moves away from Upper between
    # lon -90 and 90 and towards it elsewhere, so the equator is half ridge, half
    # convergent, each pi R long (half a great circle).
    from torque.margins import classify_pieces
    eq = Boundary("unclassified", "Upper", "Lower",
                  sphere.lonlat_to_xyz(np.arange(-180.0, 181.0, 60.0), np.zeros(7)))
    world = hemispheres([eq])
    omega = np.array([[0, 0, 0], pole_to_vector(0.0, 90.0, 1.0)])
    samples = sample_boundaries(world.boundaries, 50e3 / R)
    motion = boundary_motion(world, omega, samples)
    lines, sample_line = classify_pieces(world, motion)
    length = {k: sum(float(sphere.angle_between(b.xyz[:-1], b.xyz[1:]).sum()) * R
                     for b in lines if b.kind == k) for k in ("ridge", "subduction")}
    assert sorted({b.kind for b in lines}) == ["ridge", "subduction"]
    # within a piece (50 km) of the exact half circle at each of the two ends
    assert abs(length["ridge"] - np.pi * R) <= 2 * 50e3
    assert abs(length["subduction"] - np.pi * R) <= 2 * 50e3
    assert all(b.subducting is None for b in lines)          # no ages: not guessed
    assert len(sample_line) == len(samples.line) and sample_line.max() == len(lines) - 1
    # with ages: the older side sinks, and closing with no sea floor either side collides
    lon = np.arange(-179.5, 180, 1.0)
    lat = np.arange(-89.5, 90, 1.0)
    old_north = AgeGrid(lon, lat, np.where(lat[:, None] > 0, 120.0, 10.0) + 0 * lon)
    lines, _ = classify_pieces(world, motion, old_north)
    assert {b.subducting for b in lines if b.kind == "subduction"} == {"Upper"}
    no_sea = AgeGrid(lon, lat, np.full((len(lat), len(lon)), np.nan))
    lines, _ = classify_pieces(world, motion, no_sea)
    assert sorted({b.kind for b in lines}) == ["collision", "ridge"]


def test_classified_plates_only_world_passes_check(write_world, tmp_path, cli):
    # A plates-only world: kinds come from the motions, ages are synthesised from the ridges
    # found, every sinking plate is resolved, and check accepts the file written.
    from .conftest import plate_feature
    from .worlds import voronoi_rings
    _, _, rings = voronoi_rings(10, 4)
    path = write_world([plate_feature(f"P{i}", [r]) for i, r in enumerate(rings)])
    rng = np.random.default_rng(2)
    rows = ["plate,lat,lon,rate"] + [f"P{i},{rng.uniform(-60, 60):.3f},"
                                     f"{rng.uniform(-180, 180):.3f},{rng.uniform(0.2, 1):.3f}"
                                     for i in range(10)]
    (tmp_path / "m.csv").write_text("\n".join(rows) + "\n")
    out = tmp_path / "classified.geojson"
    status, text, err = cli("boundaries", path, tmp_path / "m.csv", "--classify",
                            "--geojson", out, "-o", tmp_path / "b.csv")
    assert status == 0, err
    assert "synthesised" in text and "unresolved" not in text
    (tmp_path / "w2.toml").write_text(
        f'plates = "plates.geojson"\nboundaries = "{out.name}"\n')
    status, text, err = cli("check", tmp_path / "w2.toml")
    assert status == 0, err
