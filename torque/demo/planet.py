"""The bundled demo: an invented planet, generated deterministically.

The demo is an invented, Earth-sized planet, "Orrery". Everything in it is synthetic:

* 14 plates, the spherical Voronoi cells of fixed jittered points (scipy
  SphericalVoronoi), so every edge is a great-circle arc and neighbours share vertices;
* 5 invented continents (jittered caps), some across plate boundaries;
* boundary kinds from the motion of the plates (opening: ridge, closing: subduction, or
  collision where continents meet, mostly along-strike: transform), the sinking plate the
  one with older sea floor, iterated with the forward model until the kinds settle;
* a sea-floor age grid made from the ridges and half spreading rates (0.5 degrees);
* a topography grid (1 degree: sea floor at the cooling model's depth, continents at a few
  hundred metres with one invented range each), a drag coupling grid (a channel of one
  viscosity, thinner under continents) and a slab table of invented dips, which only the
  hypotheses of the newer force models use;
* eight hypothesis files, and "observed" motions made by the forward model of the
  hypothesis "continental drag" from the true coefficients in TRUE, plus Gaussian noise of
  NOISE_DEG_MYR on every Cartesian component of every Euler vector (seeded). truth.json
  records both, so a user can see the fit recover them.

Regenerate the bundled copy with ``python scripts/make_demo_world.py``; ``torque demo``
(:mod:`torque.demo.runner`) uses the bundled copy, or generates one when torque is installed
without it.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np

from .. import sphere
from ..inference.system import assemble
from ..inference.solvers import predict
from ..data import WorldData
from ..euler import MYR_S, Motions, pole_to_vector
from ..forces import build_terms
from ..forces.ages_synth import ridge_distance_ages, synthesise_ages
from ..forces.context import Context
from ..grids import MAX_AGE_MYR, AgeGrid
from ..hypothesis import hypothesis_from_dict
from ..io import (load_world, read_continents, write_age_grid, write_boundaries_geojson,
                  write_csv, write_feature_collection, write_hypothesis, write_json,
                  write_motions, write_netcdf, write_world_file)
from ..margins import boundary_motion, classify, sample_boundaries
from ..validate import require_valid
from ..world import Boundary

__all__ = ["BUNDLED", "SEED", "WORLD_COMMENT", "PLATE_NAMES", "CONTINENTS", "TRUE",
           "NOISE_DEG_MYR", "AGE_STEP_DEG", "HYPOTHESES", "TRUTH_HYPOTHESIS",
           "GRID_STEP_DEG", "CHANNEL_VISCOSITY_PA_S", "CHANNEL_THICKNESS_M", "SPREAD",
           "generators", "voronoi_regions", "plate_rings", "continent_rings",
           "seed_motions", "write"]

BUNDLED = Path(__file__).resolve().parents[2] / "polygons_demo"
SEED = 20261202
WORLD_COMMENT = "Orrery: an invented Earth-sized planet for the torque demo. All data synthetic."
PLATE_NAMES = [
    "Vessane", "Orlum", "Tharrik", "Quessa", "Bruvel", "Ilvane", "Sarpenna",
    "Kelvor", "Nimbril", "Drastel", "Ulmera", "Phaxon", "Corrindel", "Yorrow",
]
#: (lon, lat, radius in degrees) of the invented continents
CONTINENTS = [(-62.0, 58.0, 21.0), (38.0, 12.0, 17.0), (122.0, -28.0, 19.0),
              (-118.0, -8.0, 12.0), (160.0, 42.0, 10.0)]
#: the coefficients that made the "observed" motions (hypothesis "continental drag")
TRUE = {"ridge": 1.0, "slab": 0.05, "drag_ocean": 2.0e14, "drag_continent": 1.5e15}
NOISE_DEG_MYR = 0.01
AGE_STEP_DEG = 0.5

HYPOTHESES = {
    "ridge_drag": ("ridge and drag", [
        {"kind": "ridge", "coefficient": 1.0},
        {"kind": "drag", "region": "all", "coefficient": "free"}]),
    "ridge_slab_drag": ("ridge, slab and drag", [
        {"kind": "ridge", "coefficient": 1.0},
        {"kind": "slab", "coefficient": "free", "bounds": [0.0, 1.0], "age_myr": 60.0},
        {"kind": "drag", "region": "all", "coefficient": "free"}]),
    "continental_drag": ("ridge, slab, oceanic and continental drag", [
        {"kind": "ridge", "coefficient": 1.0},
        {"kind": "slab", "coefficient": "free", "bounds": [0.0, 1.0], "age_myr": 60.0},
        {"kind": "drag", "region": "ocean", "coefficient": "free"},
        {"kind": "drag", "region": "continent", "coefficient": "free"}]),
    "slab_drag": ("slab and drag", [
        {"kind": "slab", "coefficient": 0.05, "age_myr": 60.0},
        {"kind": "drag", "region": "all", "coefficient": "free"}]),
    "boundary_resistance": ("ridge, slab, drag and boundary resistance", [
        {"kind": "ridge", "coefficient": 1.0},
        {"kind": "slab", "coefficient": "free", "bounds": [0.0, 1.0], "age_myr": 60.0},
        {"kind": "drag", "region": "all", "coefficient": "free"},
        {"kind": "transform", "coefficient": "free"},
        {"kind": "collision", "coefficient": "free"}]),
}
HYPOTHESES.update({
    "slab_geometry": ("ridge, warming upper- and lower-mantle slabs, suction and drag", [
        {"kind": "ridge", "coefficient": 1.0},
        {"kind": "slab", "label": "slab_upper", "mantle_part": "upper", "depth_km": 1200.0,
         "warming": "conductive", "direction": "convergence", "coefficient": "free",
         "bounds": [0.0, 1.0]},
        {"kind": "slab", "label": "slab_lower", "mantle_part": "lower", "depth_km": 1200.0,
         "warming": "conductive", "coefficient": "free", "bounds": [0.0, 1.0]},
        {"kind": "suction", "form": "per-length", "coefficient": "free"},
        {"kind": "drag", "region": "ocean", "coefficient": "free"},
        {"kind": "drag", "region": "continent", "coefficient": "free"}]),
    "continental_energy": ("ridge, slab, continental potential energy, drag from a grid", [
        {"kind": "ridge", "coefficient": 1.0},
        {"kind": "gpe", "form": "distributed", "coefficient": 1.0},
        {"kind": "slab", "coefficient": "free", "bounds": [0.0, 1.0], "age_myr": 60.0},
        {"kind": "drag", "label": "drag_grid", "coupling": "grid", "coefficient": "free"}]),
    "rate_independent": ("ridge, slab, age-coupled drag, constant-stress transforms", [
        {"kind": "ridge", "coefficient": 1.0},
        {"kind": "slab", "coefficient": "free", "bounds": [0.0, 1.0], "age_myr": 60.0},
        {"kind": "drag", "region": "ocean", "coupling": "age", "coefficient": "free"},
        {"kind": "drag", "region": "continent", "coefficient": "free"},
        {"kind": "transform", "law": "constant-stress", "coefficient": "free",
         "bounds": [0.0, 1e8]}]),
})
TRUTH_HYPOTHESIS = "continental_drag"
#: Step (degrees) of the demo's topography and drag coupling grids.
GRID_STEP_DEG = 1.0
#: The demo's drag channel: one viscosity, 200 km thick under sea floor and 40 km under
#: continents (invented; C = eta / h is 2e14 and 1e15 Pa s/m).
CHANNEL_VISCOSITY_PA_S = 4e19
CHANNEL_THICKNESS_M = {"ocean": 200e3, "continent": 40e3}
SPREAD = {"expansivity": {"normal": 0.2e-5}, "plate_thickness_km": {"uniform": [85.0, 105.0]}}


def generators(n: int, seed: int = SEED) -> np.ndarray:
    """Well-spread but irregular points: a Fibonacci lattice, jittered, then normalised.

    Parameters
    ----------
    n : int
    seed : int

    Returns
    -------
    ndarray, shape (n, 3)
        Unit vectors.
    """
    rng = np.random.default_rng(seed)
    k = np.arange(n) + 0.5
    z = 1.0 - 2.0 * k / n
    phi = np.pi * (1.0 + 5.0 ** 0.5) * k
    pts = np.c_[np.sqrt(1 - z * z) * np.cos(phi), np.sqrt(1 - z * z) * np.sin(phi), z]
    pts += rng.normal(scale=0.18, size=pts.shape)
    return pts / np.linalg.norm(pts, axis=1, keepdims=True)


def voronoi_regions(gen: np.ndarray):
    """Spherical Voronoi cells of ``gen`` with every region's vertex indices counter-clockwise
    seen from outside (scipy sorts them, but not always in that sense).

    Returns the ``SphericalVoronoi`` and the list of oriented regions.

    Parameters
    ----------
    gen : ndarray, shape (n, 3)
        Unit vectors.

    Returns
    -------
    sv : scipy.spatial.SphericalVoronoi
    regions : list of list of int
    """
    from scipy.spatial import SphericalVoronoi      # only when a world is generated
    sv = SphericalVoronoi(gen)
    sv.sort_vertices_of_regions()
    regions = []
    for g, region in zip(gen, sv.regions):
        v = sv.vertices[region]
        # counter-clockwise iff (v1 - v0) x (v2 - v0) points away from the centre
        regions.append(list(region) if np.dot(np.cross(v[1] - v[0], v[2] - v[0]), g) >= 0
                       else list(region)[::-1])
    return sv, regions


def plate_rings(gen: np.ndarray):
    """Counter-clockwise lon/lat rings (closed) of the Voronoi cells of ``gen``.

    Parameters
    ----------
    gen : ndarray, shape (n, 3)

    Returns
    -------
    list of list
        ``[lon, lat]`` rings, degrees.
    """
    sv, regions = voronoi_regions(gen)
    rings = []
    for region in regions:
        v = sv.vertices[region]
        lon = np.degrees(np.arctan2(v[:, 1], v[:, 0]))
        lat = np.degrees(np.arcsin(np.clip(v[:, 2], -1, 1)))
        ring = np.round(np.c_[lon, lat], 10).tolist()
        rings.append(ring + [ring[0]])
    return rings


def continent_rings(seed: int = SEED + 7):
    """Jittered caps, counter-clockwise, closed (lon/lat).

    Parameters
    ----------
    seed : int

    Returns
    -------
    list of list
        ``[lon, lat]`` rings, degrees.
    """
    from pyproj import Geod
    geod = Geod(a=6371e3, b=6371e3)
    rng = np.random.default_rng(seed)
    out = []
    for lon0, lat0, r in CONTINENTS:
        n = 72
        az = np.linspace(360.0, 0.0, n, endpoint=False)
        wobble = 1 + 0.18 * np.sin(np.radians(3 * az + rng.uniform(0, 360))) \
            + 0.08 * np.sin(np.radians(7 * az + rng.uniform(0, 360)))
        lon, lat, _ = geod.fwd(np.full(n, lon0), np.full(n, lat0), az,
                               np.radians(r) * 6371e3 * wobble)
        ring = np.round(np.c_[lon, lat], 8).tolist()
        out.append(ring + [ring[0]])
    return out


def seed_motions(n: int, seed: int = SEED + 1) -> np.ndarray:
    """Invented Euler vectors (lat, lon, rate) to start the classification from.

    Parameters
    ----------
    n : int
    seed : int

    Returns
    -------
    ndarray, shape (n, 3)
        lat, lon (degrees) and rate (deg/Myr).
    """
    rng = np.random.default_rng(seed)
    return np.c_[np.degrees(np.arcsin(rng.uniform(-1, 1, n))), rng.uniform(-180, 180, n),
                 rng.uniform(0.2, 1.0, n)]


def write(outdir: Path) -> dict:
    """Write the demo world, its data and hypotheses into ``outdir``; return the truth.

    Parameters
    ----------
    outdir : Path
        Made if missing.

    Returns
    -------
    dict
        The truth (also written to ``truth.json``).
    """
    outdir.mkdir(parents=True, exist_ok=True)
    (outdir / "hypotheses").mkdir(exist_ok=True)
    rings = plate_rings(generators(len(PLATE_NAMES)))
    plates = [{"type": "Feature", "properties": {"plate": name},
               "geometry": {"type": "Polygon", "coordinates": [ring]}}
              for name, ring in zip(PLATE_NAMES, rings)]
    write_feature_collection(outdir / "plates.geojson", plates)
    conts = [{"type": "Feature", "properties": {"name": f"landmass {i + 1}"},
              "geometry": {"type": "Polygon", "coordinates": [r]}}
             for i, r in enumerate(continent_rings())]
    write_feature_collection(outdir / "continents.geojson", conts)
    keys = {"name": "Orrery", "radius_km": 6371.0, "plates": "plates.geojson",
            "continents": "continents.geojson"}
    write_world_file(outdir / "world.toml", keys, WORLD_COMMENT)
    world = require_valid(load_world(outdir / "world.toml"))
    continents = read_continents(outdir / "continents.geojson")
    names = world.plate_names

    s = seed_motions(len(names))
    truth_hyp = hypothesis_from_dict({"force": [
        {**{k: v for k, v in f.items() if k != "bounds"}, "coefficient": TRUE[_label(f)]}
        for f in HYPOTHESES[TRUTH_HYPOTHESIS][1]]})
    world, ages, omega, history = _settle(world, continents, truth_hyp,
                                          pole_to_vector(s[:, 0], s[:, 1], s[:, 2]))

    write_boundaries_geojson(outdir / "boundaries.geojson", world.boundaries)
    write_age_grid(outdir / "ages.nc", ages, "Orrery sea-floor ages (synthetic demo data)")
    _write_slab_table(outdir / "slabs.csv", world)
    topo, coupling = _extra_grids(world, continents, ages)
    write_netcdf(outdir / "topography.nc", topo)
    write_netcdf(outdir / "drag_coupling.nc", coupling)
    write_world_file(outdir / "world.toml", {**keys, "boundaries": "boundaries.geojson",
                                             "ages": "ages.nc", "topography": "topography.nc",
                                             "drag_coupling": "drag_coupling.nc",
                                             "slabs": "slabs.csv"}, WORLD_COMMENT)

    rng = np.random.default_rng(SEED + 2)
    sigma = NOISE_DEG_MYR * np.pi / 180 / 3.15576e13
    observed = omega + sigma * rng.standard_normal(omega.shape)
    cov = np.broadcast_to(sigma ** 2 * np.eye(3), (len(names), 3, 3)).copy()
    write_motions(outdir / "motions.csv", Motions(tuple(names), observed, cov))
    write_motions(outdir / "true_motions.csv", Motions(tuple(names), omega))

    for key, (title, forces) in HYPOTHESES.items():
        write_hypothesis(outdir / "hypotheses" / f"{key}.toml", title, forces,
                         SPREAD if key == TRUTH_HYPOTHESIS else None,
                         f"Demo hypothesis (synthetic planet): {title}")
    truth = {
        "note": "Synthetic demo data. The motions in motions.csv were made by the forward "
                "model of the hypothesis below from these coefficients, plus Gaussian noise.",
        "hypothesis": HYPOTHESES[TRUTH_HYPOTHESIS][0],
        "hypothesis_file": f"hypotheses/{TRUTH_HYPOTHESIS}.toml",
        "true_coefficients": TRUE,
        "noise_deg_myr_per_component": NOISE_DEG_MYR,
        "noise_seed": SEED + 2,
        "frame": "mantle at rest (the forward model's frame)",
        "classification_iterations": len(history),
    }
    write_json(outdir / "truth.json", truth, end="\n")
    return truth


def _settle(world, continents, truth_hyp, omega, age_step=AGE_STEP_DEG):
    """Boundary kinds, ages and motions that agree with one another.

    Kinds come from the motions (classification), ages from the ridges and spreading rates,
    motions from the forward model of the true hypothesis; iterated until the kinds repeat
    (at most six times).

    Returns
    -------
    world : World
        With classified boundaries.
    ages : AgeGrid
    omega : ndarray, shape (P, 3)
        The forward model's Euler vectors, rad/s.
    history : list of list of str
        The kinds after each iteration.
    """
    # continental share of each plate decides, without ages, which side sinks
    cont_share = (WorldData(world, continents=continents).continental_part.area
                  / world.geometry.moments[0])
    ages = None
    history = []
    for _ in range(6):
        samples = sample_boundaries(world.boundaries, 20e3 / world.radius_m)
        kinds, sinking = classify(world, boundary_motion(world, omega, samples), ages)
        bnd = []
        for k, (b, kind, sink) in enumerate(zip(world.boundaries, kinds, sinking)):
            if kind == "subduction":
                both = _continental_both_sides(world, b, continents)
                if both:
                    kind, sink = "collision", None
                elif sink is None:
                    il, ir = world.plate_index[b.left], world.plate_index[b.right]
                    sink = b.left if cont_share[il] <= cont_share[ir] else b.right
            bnd.append(Boundary(kind, b.left, b.right, b.xyz, None, sink, {}))
        world = dataclasses.replace(world, boundaries=tuple(bnd), boundaries_derived=False)
        ctx = Context(world, truth_hyp, omega, continents=continents)
        ctx.SYNTH_STEP_DEG = age_step
        grid, _ = synthesise_ages(ctx)
        ages = _fill_ocean(grid, world, ctx, omega, MAX_AGE_MYR, AgeGrid)
        ctx = Context(world, truth_hyp, omega, ages=ages, continents=continents)
        system = assemble(world, truth_hyp, build_terms(ctx))
        omega = predict(system, system.fixed)
        history.append([b.kind for b in bnd])
        if len(history) > 1 and history[-1] == history[-2]:
            break
    return world, ages, omega, history


def _write_slab_table(path, world) -> None:
    """Invented dips (30-70 degrees, seeded) for every subduction line, by feature."""
    rng = np.random.default_rng(SEED + 3)
    rows = [(k, float(np.round(rng.uniform(30.0, 70.0)))) for k, b in
            enumerate(world.boundaries) if b.kind == "subduction"]
    write_csv(path, {"feature": [k for k, _ in rows], "slab_dip_deg": [d for _, d in rows]})


def _extra_grids(world, continents, ages):
    """The demo's topography and drag coupling grids (xarray Datasets)."""
    import xarray as xr
    from ..lithosphere import Cooling
    step = GRID_STEP_DEG
    lon = np.arange(-180.0, 180.0, step) + step / 2
    lat = np.arange(-90.0, 90.0, step) + step / 2
    LON, LAT = np.meshgrid(lon, lat)
    xyz = sphere.lonlat_to_xyz(LON, LAT)
    cont = continents.contains(xyz.reshape(-1, 3)).reshape(LON.shape)
    age = ages.sample(LON.ravel(), LAT.ravel()).reshape(LON.shape)
    depth = Cooling().depth_m(np.nan_to_num(age, nan=100.0).ravel()).reshape(LON.shape)
    # continents at 300 m, with one range each: 2.5 km high, a third of the continent wide,
    # centred half-way out from its centre (invented)
    land = np.full(LON.shape, 300.0)
    for k, (lon0, lat0, radius) in enumerate(CONTINENTS):
        centre = sphere.lonlat_to_xyz(lon0 + 0.5 * radius * np.cos(k), lat0
                                      + 0.5 * radius * np.sin(k))
        d = np.degrees(sphere.angle_between(xyz, centre[None, None, :]))
        land += 2500.0 * np.exp(-(d / (radius / 3)) ** 2)
    elevation = np.where(cont, land, -depth)
    thickness = np.where(cont, CHANNEL_THICKNESS_M["continent"], CHANNEL_THICKNESS_M["ocean"])
    coords = {"lon": ("lon", lon, {"units": "degrees_east"}),
              "lat": ("lat", lat, {"units": "degrees_north"})}
    topo = xr.Dataset({"elevation_m": (("lat", "lon"), np.round(elevation, 1),
                                       {"units": "m", "long_name": "surface elevation "
                                        "(synthetic)"})}, coords=coords,
                      attrs={"title": "Orrery topography (synthetic demo data)"})
    coupling = xr.Dataset({
        "viscosity_pa_s": (("lat", "lon"), np.full(LON.shape, CHANNEL_VISCOSITY_PA_S),
                           {"units": "Pa s"}),
        "thickness_m": (("lat", "lon"), thickness, {"units": "m"})}, coords=coords,
        attrs={"title": "Orrery drag channel (synthetic demo data): C = viscosity / "
                        "thickness"})
    return topo, coupling


def _label(f):
    if f["kind"] == "drag":
        return f"drag_{f['region']}" if f["region"] != "all" else "drag"
    return f["kind"]


def _continental_both_sides(world, b, continents):
    n, _ = sphere.arc_pole(b.xyz[:-1], b.xyz[1:])
    mid = sphere.normalize(b.xyz[:-1] + b.xyz[1:])
    off = 100e3 / world.radius_m
    left = continents.contains(sphere.step_toward(mid, n, off))
    right = continents.contains(sphere.step_toward(mid, -n, off))
    return bool(np.mean(left & right) > 0.5)


def _fill_ocean(grid, world, ctx, omega, max_age, AgeGrid):
    """Give oceanic nodes that synthesis left without age (plates with no opening ridge) the
    age their distance to the nearest ridge anywhere would give at the median half rate."""
    age = grid.age_myr.copy()
    cont = ctx.node_continental(grid)
    hole = ~np.isfinite(age) & ~cont
    if hole.any():
        ridges = [b for b in world.boundaries if b.kind == "ridge"]
        smp = sample_boundaries(ridges, 10e3 / world.radius_m)
        sub = dataclasses.replace(world, boundaries=tuple(ridges))
        opening = boundary_motion(sub, omega, smp).opening_mm_yr
        half = max(np.median(opening[opening > 0]) / 2, 5.0) / 1e3 / (MYR_S / 1e6)
        LON, LAT = np.meshgrid(grid.lon, grid.lat)
        xyz = sphere.lonlat_to_xyz(LON[hole], LAT[hole])
        age[hole] = ridge_distance_ages(xyz, smp.xyz, half, world.radius_m, max_age)
    return AgeGrid(grid.lon, grid.lat, age, "demo")
