"""The data model: derived boundaries, the columnar BoundarySet, ring orientation.

Sources: Euler's formula for a polyhedral tiling of the sphere (V - E + F = 2); line
lengths from GeographicLib through pyproj.Geod (Karney 2013, J. Geodesy 87).
"""

import numpy as np
import pytest
from pyproj import Geod

from torque import sphere
from torque.io import load_world
from torque.world import BoundarySet
from torque.rings import as_written

from .worlds import voronoi_world


def test_derived_boundaries_are_the_shared_edges(voronoi_world_file):
    # A Voronoi tiling of n cells has 3n - 6 edges (Euler's formula, V - E + F = 2 with
    # every vertex of degree 3); each is shared by exactly two cells.
    path, _ = voronoi_world_file
    w = load_world(path)
    assert len(w.boundaries) == 3 * 12 - 6
    pairs = {frozenset((b.left, b.right)) for b in w.boundaries}
    assert len(pairs) == len(w.boundaries)
    # walking each line as written, its left plate is on the left
    for b in w.boundaries:
        n, theta = sphere.arc_pole(b.xyz[0], b.xyz[1])
        m = sphere.slerp_points(b.xyz[0], b.xyz[1], 0.5)
        off = 0.01 * theta
        got = w.locate_xyz(np.stack([np.cos(off) * m + np.sin(off) * n,
                                     np.cos(off) * m - np.sin(off) * n]))
        assert [w.plates[i].name for i in got] == [b.left, b.right]


def test_boundary_set_holds_every_arc_once_with_its_plates():
    w = voronoi_world(12, 3)
    bs = w.boundary_set
    assert len(bs.kind) == len(w.boundaries)
    assert len(bs.line) == sum(len(b.xyz) - 1 for b in w.boundaries)
    names = np.array(w.plate_names)
    assert names[bs.left].tolist() == [b.left for b in w.boundaries]
    assert names[bs.right].tolist() == [b.right for b in w.boundaries]
    # line lengths against GeographicLib on a unit sphere
    geod = Geod(a=1.0, b=1.0)
    for k, b in enumerate(w.boundaries):
        lon, lat = sphere.xyz_to_lonlat(b.xyz)
        _, _, d = geod.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
        assert bs.length()[k] == pytest.approx(d.sum(), rel=1e-12)
    # every arc's pole points into its left plate
    mid = sphere.slerp_points(bs.a, bs.b, 0.5)
    got = w.locate_xyz(sphere.step_toward(mid, bs.pole, 0.01 * bs.theta))
    assert np.array_equal(got, bs.arc_left)
    sub = bs.of_kind("unclassified")
    assert len(sub.line) == len(bs.line) and len(bs.of_kind("ridge").line) == 0
    empty = BoundarySet.from_boundaries((), {})
    assert len(empty.line) == 0 and empty.length().shape == (0,)


def test_as_written_undoes_the_automatic_winding():
    # a plate written clockwise (against RFC 7946) is turned round under "auto"; the
    # rings as written are those of the file again
    w = voronoi_world(6, 1)
    g = w.geometry
    assert g.ring_reversed is not None
    back = as_written(g)
    assert np.array_equal(back.xyz, g.xyz) == (not g.ring_reversed.any())


def test_t_junctions_and_nearly_shared_vertices_still_give_boundaries():
    # The southern hemisphere's outline has a vertex at lon 60 that the northern one lacks
    # (a T-junction), and the northern one's vertices are 1e-7 degrees (about 1 cm) off the
    # southern ones: the shared edge is still the whole equator, 2 pi R long.
    from torque.io import world_from_rings
    north = [(0, 1e-7), (120, -1e-7), (240, 1e-7)]
    south = [(0, 0), (240, 0), (120, 0), (60, 0)]
    w = world_from_rings({"Upper": [north], "Lower": [south]}, winding="strict")
    assert [p for p in w.problems if "shared with no other" in p.message] == []
    total = sum(float(sphere.angle_between(b.xyz[:-1], b.xyz[1:]).sum())
                for b in w.boundaries)
    assert total == pytest.approx(2 * np.pi, rel=1e-9)
    assert {(b.left, b.right) for b in w.boundaries} == {("Upper", "Lower")}
    # with the tolerance below the offsets, the stretches are reported instead
    strict = world_from_rings({"Upper": [north], "Lower": [south]}, winding="strict",
                              vertex_tolerance_m=1e-3)
    assert any("shared with no other" in p.message for p in strict.problems)


def test_plate_at_names_the_plate_that_locate_numbers():
    # plate_at is locate by name, "" off every plate (its definition)
    from .worlds import voronoi_world
    w = voronoi_world(8, 2)
    rng = np.random.default_rng(0)
    lon, lat = rng.uniform(-180, 180, 50), rng.uniform(-80, 80, 50)
    idx = w.locate(lon, lat)
    names = w.plate_at(lon, lat)
    assert all(n == (w.plate_names[i] if i >= 0 else "") for n, i in zip(names, idx))


def test_a_fit_names_its_values():
    from torque import inference
    from .conftest import demo_system
    system, obs, _ = demo_system()
    fit = inference.fit_velocity(system, obs)
    assert list(fit.named) == list(system.labels)
    assert fit.named["slab"] == fit.values[system.labels.index("slab")]
