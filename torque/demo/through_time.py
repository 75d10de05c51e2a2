"""The demo planet through time: past configurations of Orrery and their motions.

Every stage is made the way the present one is (:mod:`torque.demo.planet`), from moved
Voronoi generators:

* the stated finite rotations: plate p at ``t`` Ma is where rotating it back about its
  present true Euler vector ``omega_p`` for ``t`` Myr puts it, ``R_p(t) = exp(-t [omega_p]x)``
  (written to ``rotations.csv`` in the series' folder, present -> past);
* the plates are the Voronoi cells of the generators so moved (so they tile the sphere at
  every stage, and grow or shrink as the generators approach or part), each continent
  moves with the plate that holds its centre today;
* boundary kinds, sea-floor ages (synthesised from the ridges and spreading rates, on a 1
  degree grid) and the motions are settled together with the forward model of the same
  true hypothesis and coefficients as today (:data:`torque.demo.planet.TRUE`), then given
  noise of :data:`~torque.demo.planet.NOISE_DEG_MYR` per component, seeded per stage.

So the joint fit over the stages should recover the one set of true coefficients.
``python scripts/make_demo_world.py`` writes the series into ``polygons_demo/stages``.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from scipy.spatial.transform import Rotation

from .. import sphere
from ..euler import MYR_S, Motions, vector_to_pole
from ..hypothesis import hypothesis_from_dict
from ..io import (load_world, read_continents, read_motions, write_age_grid,
                  write_boundaries_geojson, write_csv, write_feature_collection, write_json,
                  write_motions, write_world_file)
from ..validate import require_valid
from . import planet

__all__ = ["STAGE_TIMES_MA", "PAST_AGE_STEP_DEG", "COMPARE", "rotation_back",
           "write_series"]

#: Times (Ma) of the past stages; the present (0 Ma) is the bundled world itself.
STAGE_TIMES_MA = (5.0, 10.0, 15.0, 20.0)
#: Sea-floor ages of the past stages are synthesised on this grid (degrees).
PAST_AGE_STEP_DEG = 1.0
#: Hypotheses ranked against the true one over the series.
COMPARE = ("ridge_slab_drag", "ridge_drag")


def rotation_back(omega_rad_s, t_ma: float) -> Rotation:
    """``R(t)``: present position -> position ``t`` Myr ago, for steady motion ``omega``.

    Parameters
    ----------
    omega_rad_s : array_like, shape (P, 3)
    t_ma : float

    Returns
    -------
    Rotation, length P
    """
    return Rotation.from_rotvec(-np.asarray(omega_rad_s, float) * t_ma * MYR_S)


def write_series(outdir: Path, present: Path = planet.BUNDLED) -> dict:
    """Write the past stages, the stated rotations and the series file into ``outdir``.

    Parameters
    ----------
    outdir : Path
        Usually ``present / "stages"``.
    present : Path
        The folder of the present world (its motions and true motions are stage 0's).

    Returns
    -------
    dict
        The series' truth (also written to ``truth.json``).
    """
    outdir.mkdir(parents=True, exist_ok=True)
    world0 = load_world(present / "world.toml")
    omega0 = read_motions(present / "true_motions.csv").for_world(world0)
    gen0 = planet.generators(len(planet.PLATE_NAMES))
    # which plate holds each generator and each continent's centre today
    gen_plate = world0.locate_xyz(gen0)
    if sorted(gen_plate) != list(range(len(gen0))):
        raise AssertionError("every demo plate should hold its own generator")
    conts0 = read_continents(present / "continents.geojson")
    rs = conts0.ring_start
    rings0 = [conts0.xyz[rs[i]:rs[i + 1]] for i in range(len(rs) - 1)]
    cont_plate = world0.locate_xyz(sphere.lonlat_to_xyz(
        *np.array([(lon, lat) for lon, lat, _ in planet.CONTINENTS]).T))
    truth_hyp = hypothesis_from_dict({"force": [
        {**{k: v for k, v in f.items() if k != "bounds"},
         "coefficient": planet.TRUE[planet._label(f)]}
        for f in planet.HYPOTHESES[planet.TRUTH_HYPOTHESIS][1]]})
    rot_rows = {"plate": [], "time_ma": [], "lat": [], "lon": [], "angle_deg": []}
    stage_rows = []
    for t in STAGE_TIMES_MA:
        R = rotation_back(omega0, t)
        for i, name in enumerate(world0.plate_names):
            rv = R[i].as_rotvec()
            lat, lon, angle = vector_to_pole(rv[None])
            rot_rows["plate"].append(name)
            rot_rows["time_ma"].append(t)
            rot_rows["lat"].append(float(lat[0]))
            rot_rows["lon"].append(float(lon[0]))
            rot_rows["angle_deg"].append(float(np.degrees(np.linalg.norm(rv))))
        gen = np.array([R[gen_plate[k]].apply(gen0[k]) for k in range(len(gen0))])
        rings = [R[cont_plate[k]].apply(r) for k, r in enumerate(rings0)]
        _check_apart(rings, t)
        folder = outdir / f"t{t:02.0f}"
        stage_rows.append(_write_stage(folder, t, gen, rings, truth_hyp, omega0))
    write_csv(outdir / "rotations.csv", rot_rows)
    truth = {
        "note": "Synthetic demo data: every stage's motions were made by the forward model of "
                "the true hypothesis with the same coefficients as today, plus Gaussian noise.",
        "hypothesis": planet.HYPOTHESES[planet.TRUTH_HYPOTHESIS][0],
        "true_coefficients": planet.TRUE,
        "noise_deg_myr_per_component": planet.NOISE_DEG_MYR,
        "finite_rotations": "rotations.csv: R_p(t) = exp(-t [omega_p]x), omega_p the present "
                            "true Euler vector (present -> past)",
        "stages": [{"time_ma": 0.0, "world": "../world.toml", "noise_seed": planet.SEED + 2}]
        + stage_rows,
    }
    write_json(outdir / "truth.json", truth, end="\n")
    _write_series_file(outdir / "series.toml")
    return truth


def _check_apart(rings, t):
    """The moved continents must not overlap (the world would be refused)."""
    import shapely
    polys = []
    for r in rings:
        lon, lat = sphere.xyz_to_lonlat(r)
        polys.append(shapely.Polygon(np.c_[lon, lat]))
    for i in range(len(polys)):
        for j in range(i + 1, len(polys)):
            if polys[i].intersects(polys[j]):
                raise AssertionError(f"continents {i + 1} and {j + 1} meet at {t:g} Ma")


def _write_stage(folder: Path, t, gen, rings, truth_hyp, omega_start) -> dict:
    folder.mkdir(parents=True, exist_ok=True)
    plates = [{"type": "Feature", "properties": {"plate": name},
               "geometry": {"type": "Polygon", "coordinates": [ring]}}
              for name, ring in zip(planet.PLATE_NAMES, planet.plate_rings(gen))]
    write_feature_collection(folder / "plates.geojson", plates)
    conts = []
    for i, r in enumerate(rings):
        lon, lat = sphere.xyz_to_lonlat(r)
        ring = np.round(np.c_[lon, lat], 8).tolist()
        conts.append({"type": "Feature", "properties": {"name": f"landmass {i + 1}"},
                      "geometry": {"type": "Polygon", "coordinates": [ring + [ring[0]]]}})
    write_feature_collection(folder / "continents.geojson", conts)
    keys = {"name": f"Orrery at {t:g} Ma", "radius_km": 6371.0, "plates": "plates.geojson",
            "continents": "continents.geojson"}
    comment = f"Orrery {t:g} Ma ago: an invented planet's past configuration. All data synthetic."
    write_world_file(folder / "world.toml", keys, comment)
    world = require_valid(load_world(folder / "world.toml"))
    continents = read_continents(folder / "continents.geojson")
    world, ages, omega, history = planet._settle(world, continents, truth_hyp, omega_start,
                                                 age_step=PAST_AGE_STEP_DEG)
    write_boundaries_geojson(folder / "boundaries.geojson", world.boundaries)
    write_age_grid(folder / "ages.nc", ages, f"Orrery sea-floor ages {t:g} Ma (synthetic)")
    write_world_file(folder / "world.toml", {**keys, "boundaries": "boundaries.geojson",
                                             "ages": "ages.nc"}, comment)
    seed = planet.SEED + 100 + int(t)
    rng = np.random.default_rng(seed)
    sigma = planet.NOISE_DEG_MYR * np.pi / 180 / MYR_S
    names = world.plate_names
    observed = omega + sigma * rng.standard_normal(omega.shape)
    cov = np.broadcast_to(sigma ** 2 * np.eye(3), (len(names), 3, 3)).copy()
    write_motions(folder / "motions.csv", Motions(tuple(names), observed, cov))
    write_motions(folder / "true_motions.csv", Motions(tuple(names), omega))
    return {"time_ma": t, "world": f"{folder.name}/world.toml", "noise_seed": seed,
            "classification_iterations": len(history)}


def _write_series_file(path: Path) -> None:
    lines = ["# The demo planet Orrery through time (synthetic): one hypothesis, five stages.",
             'name = "Orrery through time"',
             f'hypothesis = "../hypotheses/{planet.TRUTH_HYPOTHESIS}.toml"',
             "compare = [" + ", ".join(f'"../hypotheses/{h}.toml"' for h in COMPARE) + "]",
             'plates = ["Vessane", "Orlum", "Tharrik", "Quessa"]', "",
             "[[stage]]", "time_ma = 0.0", 'world = "../world.toml"',
             'motions = "../motions.csv"']
    for t in STAGE_TIMES_MA:
        lines += ["", "[[stage]]", f"time_ma = {t:.1f}", f'world = "t{t:02.0f}/world.toml"',
                  f'motions = "t{t:02.0f}/motions.csv"']
    tmp = path.with_suffix(".tmp")
    tmp.write_text("\n".join(lines) + "\n")
    tmp.replace(path)
