"""A large synthetic world for benchmarks (deterministic): Voronoi plates with densified
edges, boundaries with kinds, continents, a smooth age field and a mantle flow grid.

Everything here is invented; it is for measuring speed and accuracy only.
"""

from __future__ import annotations

import numpy as np

from torque import sphere
from torque.demo import voronoi_regions
from torque.grids import AgeGrid, FlowGrid
from torque.world import Boundary, PlateGeometry, Plate, World
from torque.rings import derive_boundaries

KINDS = ("ridge", "subduction", "transform", "collision")


def plates(n_plates=60, n_vertices=100_000, seed=1):
    """Geometry of a Voronoi tiling whose shared edges are split identically on both sides."""
    rng = np.random.default_rng(seed)
    gen = sphere.normalize(rng.normal(size=(n_plates, 3)))
    sv, regions = voronoi_regions(gen)
    # total length of distinct edges decides the split step
    edges = {}
    for region in regions:
        for a, b in zip(region, region[1:] + region[:1]):
            edges[(min(a, b), max(a, b))] = None
    ea = sv.vertices[[e[0] for e in edges]]
    eb = sv.vertices[[e[1] for e in edges]]
    total = sphere.angle_between(ea, eb).sum()
    step = 2 * total / n_vertices
    pieces = {}
    for (a, b), pa, pb in zip(edges, ea, eb):
        k = max(1, int(np.ceil(sphere.angle_between(pa, pb) / step)))
        pts = sphere.slerp_points(pa, pb, np.arange(k) / k)
        pieces[(a, b)] = pts
    rings = []
    for region in regions:
        parts = []
        for a, b in zip(region, region[1:] + region[:1]):
            pts = pieces[(min(a, b), max(a, b))]
            if a < b:
                parts.append(pts)
            else:      # the same points walked the other way: from b's end back to a
                parts.append(np.concatenate([[sv.vertices[a]], pts[1:][::-1]]))
        rings.append(np.concatenate(parts))
    xyz = np.concatenate(rings)
    start = np.r_[0, np.cumsum([len(r) for r in rings])].astype(np.int64)
    n = n_plates
    geom = PlateGeometry(xyz, start, np.arange(n), np.zeros(n, bool), np.arange(n), n)
    names = [f"S{i:02d}" for i in range(n)]
    return geom, names, gen


def world(n_plates=60, n_vertices=100_000, seed=1):
    """World with boundaries of every kind (subducting side: the lower-numbered plate)."""
    geom, names, gen = plates(n_plates, n_vertices, seed)
    base = World(tuple(Plate(nm, i, i) for i, nm in enumerate(names)), geom, tuple())
    derived, _ = derive_boundaries(geom, names)
    rng = np.random.default_rng(seed + 1)
    bnd = []
    for b in derived:
        kind = KINDS[rng.integers(len(KINDS))]
        sub = min(b.left, b.right) if kind == "subduction" else None
        bnd.append(Boundary(kind, b.left, b.right, b.xyz, None, sub, {}))
    return World(base.plates, geom, tuple(bnd), base.radius_m, False, {}, (), "synthetic")


def ages(step_deg=0.1):
    """A smooth invented age field on a global cell-centred grid, 5-195 Myr."""
    lon = np.arange(-180 + step_deg / 2, 180, step_deg)
    lat = np.arange(-90 + step_deg / 2, 90, step_deg)
    sl, cl = np.sin(np.radians(lon)), np.cos(np.radians(lon))
    sp, cp = np.sin(np.radians(lat)), np.cos(np.radians(lat))
    # 100 + 60 x + 30 y z + 5 sin(3 z), separable in lon and lat: built in place, so that
    # making the grid costs about its own size, not eight times (the benchmarks' peak memory)
    age = np.multiply.outer(60 * cp, cl)
    for r in range(0, len(lat), 64):
        age[r:r + 64] += np.multiply.outer(30 * cp[r:r + 64] * sp[r:r + 64], sl)
    age += (100 + 5 * np.sin(3 * sp))[:, None]
    return AgeGrid(lon, lat, age, "synthetic")


def flow(step_deg=1.0):
    """A rigid rotation of the mantle, 0.3 deg/Myr about (30 N, 60 E), on a grid (mm/yr)."""
    from torque.euler import pole_to_vector, velocity_en
    lon = np.arange(-180 + step_deg / 2, 180, step_deg)
    lat = np.arange(-90 + step_deg / 2, 90, step_deg)
    LON, LAT = np.meshgrid(lon, lat)
    w = pole_to_vector(30.0, 60.0, 0.3)
    ve, vn = velocity_en(np.broadcast_to(w, (LON.size, 3)),
                         sphere.lonlat_to_xyz(LON.ravel(), LAT.ravel()), 6371e3)
    return FlowGrid(lon, lat, ve.reshape(LON.shape), vn.reshape(LON.shape), "synthetic")


def continents(n=8, seed=3):
    """Invented continents: small caps (polygons of 400 vertices) that do not overlap.

    Centres are drawn one after another and a cap is kept only if it stays clear of every
    cap kept before (rejection sampling, deterministic for a seed), so the world passes
    ``torque check``.
    """
    from torque.continents import Continents
    rng = np.random.default_rng(seed)
    centres, radii, rings = [], [], []
    for _ in range(1000):
        if len(rings) == n:
            break
        c = sphere.normalize(rng.normal(size=3))
        r = np.radians(rng.uniform(8, 18))
        if any(np.arccos(np.clip(c @ c2, -1, 1)) < r + r2 + np.radians(2)
               for c2, r2 in zip(centres, radii)):
            continue
        centres.append(c)
        radii.append(r)
        e = sphere.normalize(np.cross(c, [0.3, 0.5, 0.8]))
        f = np.cross(c, e)
        t = np.linspace(0, 2 * np.pi, 400, endpoint=False)
        rings.append(np.cos(r) * c + np.sin(r) * (np.cos(t)[:, None] * e
                                                  + np.sin(t)[:, None] * f))
    else:
        raise RuntimeError(f"could not place {n} separate continents")
    xyz = np.concatenate(rings)
    start = np.r_[0, np.cumsum([len(r) for r in rings])]
    return Continents(xyz, start, np.zeros(n, bool), np.arange(n), "synthetic")


def motions(n_plates, seed=5):
    from torque.euler import pole_to_vector
    rng = np.random.default_rng(seed)
    return pole_to_vector(np.degrees(np.arcsin(rng.uniform(-1, 1, n_plates))),
                          rng.uniform(-180, 180, n_plates), rng.uniform(0.1, 1.2, n_plates))
