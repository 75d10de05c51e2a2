"""One builder per kind of test world, all in memory (invented geometry, for tests only).

* :func:`voronoi_rings` and :func:`voronoi_world`: random spherical Voronoi tilings (scipy
  ``SphericalVoronoi``), optionally rotated and with boundary kinds in a fixed cycle;
* :func:`hemispheres`: the northern and southern hemispheres, optionally rotated;
* :func:`east_west`: the eastern and western hemispheres;
* :func:`forces` and :func:`system_for`: a hypothesis with every boundary kind for a
  kinded Voronoi world, its invented true coefficients :data:`TRUE`, and its balance;
* :func:`trench_hemispheres`: the hemispheres with one trench, slab pull free against
  fixed drag, whose predicted motion is linear in the one coefficient.

Fixtures that write worlds to files are in ``conftest.py`` (``write_world``,
``voronoi_world_file``).
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import SphericalVoronoi

from torque import compute_torques, inference, sphere

from torque import polygons
from torque.hypothesis import hypothesis_from_dict
from torque.io import world_from_rings
from torque.world import Boundary

#: Boundary kinds given in turn to the shared edges of a kinded Voronoi world.
KIND_CYCLE = ("ridge", "subduction", "transform", "subduction", "ridge", "collision")


def rotated_lonlat(coords, Q=None) -> np.ndarray:
    """Lon/lat points ``(n, 2)`` rotated by the matrix ``Q`` (unchanged without one)."""
    coords = np.asarray(coords, float)
    if Q is None:
        return coords
    return np.c_[sphere.xyz_to_lonlat(sphere.lonlat_to_xyz(*coords.T) @ np.asarray(Q).T)]


def voronoi_rings(n, seed=0, Q=None):
    """Generators, the SphericalVoronoi and rings (lon/lat, closed, counter-clockwise) of a
    random Voronoi tiling of ``n`` cells; rings rotated by ``Q`` if given."""
    rng = np.random.default_rng(seed)
    gen = sphere.normalize(rng.normal(size=(n, 3)))
    sv = SphericalVoronoi(gen)
    sv.sort_vertices_of_regions()
    rings = []
    for region in sv.regions:
        v = sv.vertices[region]
        if polygons.ring_left_area(v, [0, len(v)])[0] > 2 * np.pi:
            v = v[::-1]
        lon, lat = sphere.xyz_to_lonlat(v)
        ring = rotated_lonlat(np.c_[lon, lat], Q).tolist()
        rings.append(ring + [ring[0]])
    return gen, sv, rings


def voronoi_world(n=12, seed=3, Q=None, kinds=None):
    """A Voronoi world of plates ``P0 .. P{n-1}`` (boundaries derived, ``unclassified``).

    With ``kinds`` (a cycle such as :data:`KIND_CYCLE`), the shared edges get kinds in
    turn, and every subduction zone's left plate sinks.
    """
    _, _, rings = voronoi_rings(n, seed, Q)
    plates = {f"P{i}": [r] for i, r in enumerate(rings)}
    w = world_from_rings(plates)
    if kinds is None:
        return w
    bnd = []
    for k, b in enumerate(w.boundaries):
        kind = kinds[k % len(kinds)]
        bnd.append(Boundary(kind, b.left, b.right, b.xyz, None,
                            b.left if kind == "subduction" else None, {}))
    return world_from_rings(plates, boundaries=bnd)


def hemispheres(boundaries=(), Q=None):
    """Plates Upper (north) and Lower (south), optionally everything rotated by ``Q``."""
    north = rotated_lonlat([(0, 0), (120, 0), (240, 0)], Q)
    south = rotated_lonlat([(240, 0), (120, 0), (0, 0)], Q)
    return world_from_rings({"Upper": [north.tolist()], "Lower": [south.tolist()]},
                            boundaries=boundaries, winding="strict")


def east_west(boundaries=()):
    """Plates East (lon 0 to 180) and West."""
    east = [(0, 90), (0, 0), (0, -90), (90, 0)]
    west = [(0, 90), (270, 0), (0, -90), (180, 0)]
    return world_from_rings({"East": [east], "West": [west]}, boundaries=boundaries)


#: invented true coefficients of :func:`forces` (for tests only)
TRUE = {"slab": 0.07, "drag": 4e14, "transform": 3e20, "trench": 8e20}


def hyp(*forces, **physics):
    """A hypothesis of these force entries (dicts), with physics options if given."""
    cfg = {"force": list(forces)}
    if physics:
        cfg["physics"] = physics
    return hypothesis_from_dict(cfg)


def forces(free=True):
    """Ridge push (edge, fixed), slab pull, drag, transform and trench resistance: free, or
    fixed at :data:`TRUE`."""
    f = [{"kind": "ridge", "form": "edge", "coefficient": 1.0},
         {"kind": "slab", "age_myr": 80.0}, {"kind": "drag", "label": "drag"},
         {"kind": "transform"}, {"kind": "trench"}]
    for e in f[1:]:
        e["coefficient"] = "free" if free else TRUE[e.get("label", e["kind"])]
    return hypothesis_from_dict({"force": f})


def system_for(world, hyp, omega=None):
    """The balance of a hypothesis on a world (motions zero unless given)."""
    P = world.geometry.n_plates
    omega = np.zeros((P, 3)) if omega is None else omega
    return inference.assemble(world, hyp, compute_torques(world, hyp, omega))


def trench_hemispheres(slab_bounds=None):
    """The balance of slab pull (free, 3e13 N/m) against fixed drag (5e14 Pa s/m) on the
    hemispheres with a trench along the equator from lon 0 to 120 (Lower sinks): the
    predicted motion is ``c g``, linear in the slab coefficient ``c``."""
    trench = Boundary("subduction", "Upper", "Lower",
                      sphere.lonlat_to_xyz(np.array([0.0, 60.0, 120.0]), np.zeros(3)),
                      subducting="Lower")
    slab = {"kind": "slab", "force_per_length": 3e13}
    if slab_bounds is not None:
        slab["bounds"] = list(slab_bounds)
    hyp = hypothesis_from_dict({"force": [slab, {"kind": "drag", "coefficient": 5e14}]})
    return system_for(hemispheres([trench]), hyp)
