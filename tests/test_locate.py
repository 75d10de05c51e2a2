"""Which plate holds each point, against references outside the project.

Sources: a point lies in the Voronoi cell of its nearest generator (definition of a Voronoi
cell; nearest found with scipy.spatial.cKDTree); a gnomonic projection maps great circles to
straight lines (Snyder 1987, *Map Projections: A Working Manual*, USGS PP 1395, p. 164), so
shapely's planar point-in-polygon on pyproj's gnomonic coordinates is an exact reference for
polygons inside a hemisphere.
"""

import numpy as np
import pytest
import shapely
from pyproj import Proj
from scipy.spatial import cKDTree

from torque import sphere
from torque.locate import PlateLocator
from torque.io import world_from_rings

from .worlds import voronoi_rings


def voronoi_locator(n, seed):
    gen, sv, rings = voronoi_rings(n, seed)
    xyz = [sphere.lonlat_to_xyz(*np.asarray(r[:-1]).T) for r in rings]
    start = np.r_[0, np.cumsum([len(x) for x in xyz])]
    loc = PlateLocator(np.concatenate(xyz), start, np.arange(n), np.zeros(n, bool), n)
    return gen, sv, loc


def test_voronoi_cells_hold_their_nearest_points():
    # Source: definition of a Voronoi cell; nearest generator by scipy cKDTree.
    gen, sv, loc = voronoi_locator(60, seed=4)
    rng = np.random.default_rng(0)
    pts = [sphere.normalize(rng.normal(size=(200_000, 3)))]
    # crowd the poles and the antimeridian, where grid methods go wrong
    lon = rng.uniform(-180, 180, 20_000)
    pts.append(sphere.lonlat_to_xyz(lon, rng.uniform(89.0, 90.0, 20_000)))
    pts.append(sphere.lonlat_to_xyz(lon, rng.uniform(-90.0, -89.0, 20_000)))
    pts.append(sphere.lonlat_to_xyz(rng.uniform(179.0, 181.0, 20_000),
                                    rng.uniform(-90, 90, 20_000)))
    pts.append(np.array([[0, 0, 1.0], [0, 0, -1.0]]))
    # points a hair off the Voronoi edges (1e-7 rad, about 0.6 m on Earth)
    a = sv.vertices[np.concatenate([r for r in sv.regions])]
    b = sv.vertices[np.concatenate([np.roll(r, -1) for r in sv.regions])]
    mid = sphere.slerp_points(a, b, rng.uniform(0.05, 0.95, len(a)))
    n, _ = sphere.arc_pole(a, b)
    pts += [sphere.normalize(mid + 1e-7 * n), sphere.normalize(mid - 1e-7 * n)]
    pts = np.concatenate(pts)
    _, nearest = cKDTree(gen).query(pts)
    got = loc.locate(pts)
    assert np.array_equal(got, nearest)


def test_coverage_is_one_everywhere_on_a_tiling():
    # Definition of a tiling: every point lies in exactly one plate.
    _, _, loc = voronoi_locator(30, seed=9)
    xyz, cov = loc.coverage_problems()
    assert len(xyz) == 0 and len(cov) == 0


def gnomonic_contains(ring_lonlat, centre, pts_lonlat):
    """Exact reference: shapely contains on a gnomonic projection about ``centre``."""
    proj = Proj(f"+proj=gnom +lat_0={centre[1]} +lon_0={centre[0]} +R=1")
    x, y = proj(ring_lonlat[:, 0], ring_lonlat[:, 1])
    poly = shapely.Polygon(np.c_[x, y])
    px, py = proj(pts_lonlat[:, 0], pts_lonlat[:, 1])
    return shapely.contains_xy(poly, px, py)


@pytest.mark.parametrize("centre", [(179.0, 10.0), (0.0, 89.5), (-45.0, -88.0), (60.0, 0.0)])
def test_polygon_with_a_hole_in_a_world_of_three_plates(centre):
    # Reference: gnomonic projection + shapely (see module notes). The world: a cap-like
    # plate with a hole, the plate that fills the hole, and the rest of the sphere.
    rng = np.random.default_rng(1)
    lon0, lat0 = centre
    geod_ring = lambda r_deg, n, jitter: _ring(lon0, lat0, r_deg, n, rng, jitter)  # noqa
    outer = geod_ring(25.0, 60, 3.0)
    inner = geod_ring(8.0, 40, 2.0)
    world = world_from_rings({
        "Ring": [outer.tolist(), inner[::-1].tolist()],
        "Core": [inner.tolist()],
        "Rest": [outer[::-1].tolist()],
    }, winding="strict")
    assert world.area_m2.sum() == pytest.approx(4 * np.pi * world.radius_m**2, rel=1e-12)
    lon = lon0 + rng.uniform(-40, 40, 50_000) / max(np.cos(np.radians(lat0)), 0.05)
    lat = np.clip(lat0 + rng.uniform(-40, 40, 50_000), -90, 90)
    lon = np.mod(lon + 180, 360) - 180
    pts = np.c_[lon, lat]
    # keep points well inside the projection's hemisphere
    c = sphere.lonlat_to_xyz(lon0, lat0)
    pts = pts[sphere.dot(sphere.lonlat_to_xyz(lon, lat), c) > 0.2]
    in_outer = gnomonic_contains(outer, centre, pts)
    in_inner = gnomonic_contains(inner, centre, pts)
    expected = np.where(in_inner, 1, np.where(in_outer, 0, 2))
    got = world.locate(pts[:, 0], pts[:, 1])
    assert np.array_equal(got, expected)


def _ring(lon0, lat0, r_deg, n, rng, jitter):
    from pyproj import Geod
    g = Geod(a=6371e3, b=6371e3)
    az = np.linspace(360, 0, n, endpoint=False)
    d = np.radians(r_deg + rng.uniform(-jitter, jitter, n)) * 6371e3
    lon, lat, _ = g.fwd(np.full(n, lon0), np.full(n, lat0), az, d)
    return np.c_[lon, lat]


def test_multipolygon_plate():
    # A plate in two separate parts: each part holds its own points (reference: gnomonic +
    # shapely about each part's centre).
    rng = np.random.default_rng(2)
    a = _ring(20.0, 30.0, 10.0, 30, rng, 1.0)
    b = _ring(-150.0, -40.0, 12.0, 30, rng, 1.0)
    world = world_from_rings({
        "Twin": [[a.tolist()], [b.tolist()]],
        "Sea": [[a[::-1].tolist(), b[::-1].tolist()]],
    }, winding="strict")
    for ring, centre in ((a, (20.0, 30.0)), (b, (-150.0, -40.0))):
        lon = centre[0] + rng.uniform(-15, 15, 5000)
        lat = centre[1] + rng.uniform(-15, 15, 5000)
        inside = gnomonic_contains(ring, centre, np.c_[lon, lat])
        got = world.locate(lon, lat)
        assert np.array_equal(got, np.where(inside, 0, 1))
        assert inside.any() and (~inside).any()


@pytest.mark.parametrize("lon0,step,lat_nodes", [(-179.75, 0.5, "centred"),
                                                 (0.0, 0.7, "poles"), (-30.0, 1.3, "part")])
def test_locate_grid_agrees_node_for_node(lon0, step, lat_nodes):
    # The runs between crossings must give exactly what locating every node gives.
    gen, sv, loc = voronoi_locator(40, seed=6)
    lon = lon0 + step * np.arange(int(360 / step))
    if lat_nodes == "centred":
        lat = np.arange(-90 + step / 2, 90, step)
    elif lat_nodes == "poles":
        lat = np.linspace(-90, 90, 181)
    else:
        lat = np.arange(-60.0, 75.0, step)
        lon = lon[: len(lon) // 2]
    grid = loc.locate_grid(lon, lat)
    LON, LAT = np.meshgrid(lon, lat)
    assert np.array_equal(grid, loc.locate_lonlat(LON, LAT))
    # and equals the nearest generator (definition of a Voronoi cell)
    _, nearest = cKDTree(gen).query(sphere.lonlat_to_xyz(LON, LAT).reshape(-1, 3))
    assert np.array_equal(grid.ravel(), nearest)


def _grid_aligned_locator():
    # Ten plates whose every vertex is a node of the grids below: two caps beyond 60 N and
    # 60 S (great-circle edges between vertices 10 degrees apart on those parallels), and
    # eight quads between them split at the equator (edges along it: exact great circles)
    # and at the meridians 90 degrees apart. Nodes lie exactly on plate edges along the
    # equator, the meridians and at every vertex.
    def parallel(lat, lon0, lon1):
        n = int(round(abs(lon1 - lon0) / 10))
        return [(lon0 + (lon1 - lon0) * i / n, lat) for i in range(n)]

    def meridian(lon, lat0, lat1):
        n = int(round(abs(lat1 - lat0) / 30))
        return [(lon, lat0 + (lat1 - lat0) * i / n) for i in range(n)]

    rings = [parallel(60.0, -180.0, 180.0), parallel(-60.0, 180.0, -180.0)]
    for lat0, lat1 in ((0.0, 60.0), (-60.0, 0.0)):
        for lon0 in (-180.0, -90.0, 0.0, 90.0):
            lon1 = lon0 + 90.0
            rings.append(parallel(lat0, lon0, lon1) + meridian(lon1, lat0, lat1)
                         + parallel(lat1, lon1, lon0) + meridian(lon0, lat1, lat0))
    xyz = [sphere.lonlat_to_xyz(*np.asarray(r, float).T) for r in rings]
    start = np.r_[0, np.cumsum([len(x) for x in xyz])]
    n = len(rings)
    return PlateLocator(np.concatenate(xyz), start, np.arange(n), np.zeros(n, bool), n)


@pytest.mark.parametrize("lon0,step,lat_nodes", [(-180.0, 0.5, "poles"),
                                                 (-180.0, 2.5, "poles"),
                                                 (0.0, 1 / 3, "poles"),
                                                 (-45.0, 0.25, "part")])
def test_locate_grid_agrees_on_nodes_that_lie_on_edges(lon0, step, lat_nodes):
    # Nodes on the equator's edges, on meridian edges and at vertices (on an edge to
    # rounding): locate_grid must give what locate gives them, node for node. Away from the
    # edges the plate is known from the construction (definition of the tiling).
    loc = _grid_aligned_locator()
    lon = lon0 + step * np.arange(int(round(360 / step)))
    lat = np.linspace(-90, 90, int(round(180 / step)) + 1)
    if lat_nodes == "part":
        lon, lat = lon[: len(lon) // 3], lat[(lat > -70) & (lat < 35)]
    grid = loc.locate_grid(lon, lat)
    LON, LAT = np.meshgrid(lon, lat)
    assert np.array_equal(grid, loc.locate_lonlat(LON, LAT))
    assert np.array_equal(loc.locate_grid(lon, lat, region=3), grid == 3)
    lonw = np.mod(LON + 180.0, 360.0) - 180.0
    clear = ((np.abs(np.abs(LAT) - 60.0) > 1.0) & (np.abs(LAT) > 1e-9)
             & (np.abs(np.mod(lonw, 90.0)) > 1e-9))
    quad = np.floor((lonw + 180.0) / 90.0).astype(int)
    want = np.where(LAT > 60, 0, np.where(LAT < -60, 1, np.where(LAT > 0, 2 + quad, 6 + quad)))
    assert clear.sum() > 0.5 * clear.size
    assert np.array_equal(grid[clear], want[clear])
    # nodes on the equator are on an edge: either neighbour is a right answer
    eq = (np.abs(LAT) < 1e-9) & (np.abs(np.mod(lonw, 90.0)) > 1e-9)
    assert np.all((grid[eq] == 2 + quad[eq]) | (grid[eq] == 6 + quad[eq]))
