"""The bundled demo: an invented planet, generated deterministically.

The demo is an invented, Earth-sized planet, "Orrery". Everything in it is synthetic:

* 14 plates, the spherical Voronoi cells of fixed jittered points (scipy
  SphericalVoronoi), so every edge is a great-circle arc and neighbours share vertices;
* 5 invented continents (jittered caps), some across plate boundaries;
* boundary kinds from the motion of the plates (opening: ridge, closing: subduction, or
  collision where continents meet, mostly along-strike: transform), the sinking plate the
  one with older sea floor, iterated with the forward model until the kinds settle;
* a sea-floor age grid made from the ridges and half spreading rates (0.5 degrees);
* five hypothesis files, and "observed" motions made by the forward model of the
  hypothesis "continental drag" from the true coefficients in TRUE, plus Gaussian noise of
  NOISE_DEG_MYR on every Cartesian component of every Euler vector (seeded). truth.json
  records both, so a user can see the fit recover them.

Regenerate the bundled copy with ``python scripts/make_demo_world.py``; ``torque demo``
uses the bundled copy, or generates one when torque is installed without it.
"""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import numpy as np
from scipy.spatial import SphericalVoronoi, cKDTree

BUNDLED = Path(__file__).resolve().parents[1] / "polygons_demo"
SEED = 20261202
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
TRUTH_HYPOTHESIS = "continental_drag"
SPREAD = {"expansivity": {"normal": 0.2e-5}, "plate_thickness_km": {"uniform": [85.0, 105.0]}}


def generators(n: int, seed: int = SEED) -> np.ndarray:
    """Well-spread but irregular points: a Fibonacci lattice, jittered, then normalised."""
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
    """
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
    """Counter-clockwise lon/lat rings (closed) of the Voronoi cells of ``gen``."""
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
    """Jittered caps, counter-clockwise, closed (lon/lat)."""
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
    """Invented Euler vectors (lat, lon, rate) to start the classification from."""
    rng = np.random.default_rng(seed)
    return np.c_[np.degrees(np.arcsin(rng.uniform(-1, 1, n))), rng.uniform(-180, 180, n),
                 rng.uniform(0.2, 1.0, n)]


def feature_collection(features):
    return {"type": "FeatureCollection", "features": features}


def write(outdir: Path) -> dict:
    """Write the demo world, its data and hypotheses into ``outdir``; return the truth."""
    from torque.balance import assemble, predict
    from torque.continents import read_continents
    from torque.euler import Motions, pole_to_vector, write_motions
    from torque.forces import Context, build_terms
    from torque.forces.ages_synth import synthesise_ages
    from torque.grids import MAX_AGE_MYR, AgeGrid
    from torque.hypothesis import hypothesis_from_dict
    from torque.io import write_boundaries_geojson
    from torque.margins import boundary_motion, classify, sample_boundaries
    from torque.validate import require_valid
    from torque.world import Boundary, load_world

    outdir.mkdir(parents=True, exist_ok=True)
    (outdir / "hypotheses").mkdir(exist_ok=True)
    rings = plate_rings(generators(len(PLATE_NAMES)))
    plates = [{"type": "Feature", "properties": {"plate": name},
               "geometry": {"type": "Polygon", "coordinates": [ring]}}
              for name, ring in zip(PLATE_NAMES, rings)]
    (outdir / "plates.geojson").write_text(json.dumps(feature_collection(plates), indent=1))
    conts = [{"type": "Feature", "properties": {"name": f"landmass {i + 1}"},
              "geometry": {"type": "Polygon", "coordinates": [r]}}
             for i, r in enumerate(continent_rings())]
    (outdir / "continents.geojson").write_text(json.dumps(feature_collection(conts), indent=1))
    (outdir / "world.toml").write_text(
        "# Orrery: an invented Earth-sized planet for the torque demo. All data synthetic.\n"
        'name = "Orrery"\nradius_km = 6371.0\nplates = "plates.geojson"\n'
        'continents = "continents.geojson"\n')
    world = require_valid(load_world(outdir / "world.toml"))
    continents = read_continents(outdir / "continents.geojson")
    names = world.plate_names

    # continental share of each plate decides, without ages, which side sinks
    probe = Context(world, hypothesis_from_dict({"force": [{"kind": "drag"}]}),
                    continents=continents)
    cont_share = probe.continent_moments[0] / world.geometry.moments[0]

    s = seed_motions(len(names))
    omega = pole_to_vector(s[:, 0], s[:, 1], s[:, 2])
    truth_hyp = hypothesis_from_dict({"force": [
        {**{k: v for k, v in f.items() if k != "bounds"}, "coefficient": TRUE[_label(f)]}
        for f in HYPOTHESES[TRUTH_HYPOTHESIS][1]]})
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
        ctx.SYNTH_STEP_DEG = AGE_STEP_DEG
        grid, _ = synthesise_ages(ctx)
        ages = _fill_ocean(grid, world, ctx, omega, MAX_AGE_MYR, AgeGrid)
        ctx = Context(world, truth_hyp, omega, ages=ages, continents=continents)
        system = assemble(world, truth_hyp, build_terms(ctx))
        omega = predict(system, system.fixed)
        history.append([b.kind for b in bnd])
        if len(history) > 1 and history[-1] == history[-2]:
            break

    write_boundaries_geojson(outdir / "boundaries.geojson", world.boundaries)
    _write_ages(outdir / "ages.nc", ages)
    text = (outdir / "world.toml").read_text()
    (outdir / "world.toml").write_text(text + 'boundaries = "boundaries.geojson"\n'
                                       'ages = "ages.nc"\n')

    rng = np.random.default_rng(SEED + 2)
    sigma = NOISE_DEG_MYR * np.pi / 180 / 3.15576e13
    observed = omega + sigma * rng.standard_normal(omega.shape)
    cov = np.broadcast_to(sigma ** 2 * np.eye(3), (len(names), 3, 3)).copy()
    write_motions(outdir / "motions.csv", Motions(tuple(names), observed, cov))
    write_motions(outdir / "true_motions.csv", Motions(tuple(names), omega))

    for key, (title, forces) in HYPOTHESES.items():
        lines = [f"# Demo hypothesis (synthetic planet): {title}", f'name = "{title}"', ""]
        if key == TRUTH_HYPOTHESIS:
            lines += ["[spread]"] + [f"{k} = {{ {next(iter(v))} = {_toml(next(iter(v.values())))} }}"
                                     for k, v in SPREAD.items()] + [""]
        for f in forces:
            lines.append("[[force]]")
            lines += [f"{k} = {_toml(v)}" for k, v in f.items()]
            lines.append("")
        (outdir / "hypotheses" / f"{key}.toml").write_text("\n".join(lines))
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
    (outdir / "truth.json").write_text(json.dumps(truth, indent=2) + "\n")
    return truth


def _label(f):
    if f["kind"] == "drag":
        return f"drag_{f['region']}" if f["region"] != "all" else "drag"
    return f["kind"]


def _toml(v):
    if isinstance(v, str):
        return json.dumps(v)
    if isinstance(v, list):
        return "[" + ", ".join(_toml(x) for x in v) + "]"
    return repr(float(v)) if isinstance(v, float) else str(v)


def _continental_both_sides(world, b, continents):
    from torque import sphere
    n, _ = sphere.arc_pole(b.xyz[:-1], b.xyz[1:])
    mid = sphere.normalize(b.xyz[:-1] + b.xyz[1:])
    off = 100e3 / world.radius_m
    left = continents.contains(np.cos(off) * mid + np.sin(off) * n)
    right = continents.contains(np.cos(off) * mid - np.sin(off) * n)
    return bool(np.mean(left & right) > 0.5)


def _fill_ocean(grid, world, ctx, omega, max_age, AgeGrid):
    """Give oceanic nodes that synthesis left without age (plates with no opening ridge) the
    age their distance to the nearest ridge anywhere would give at the median half rate."""
    from torque import sphere
    from torque.euler import MYR_S
    from torque.margins import boundary_motion, sample_boundaries
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
        d, _ = cKDTree(smp.xyz).query(xyz)
        ang = 2 * np.arcsin(np.clip(d / 2, 0, 1))
        age[hole] = np.minimum(ang * world.radius_m / half / MYR_S, max_age)
    return AgeGrid(grid.lon, grid.lat, age, "demo")


def _write_ages(path, grid):
    import xarray as xr
    ds = xr.Dataset(
        {"age": (("lat", "lon"), grid.age_myr.astype(np.float32),
                 {"units": "Myr", "long_name": "sea-floor age (synthetic)"})},
        coords={"lon": ("lon", grid.lon, {"units": "degrees_east"}),
                "lat": ("lat", grid.lat, {"units": "degrees_north"})},
        attrs={"title": "Orrery sea-floor ages (synthetic demo data)"})
    ds.to_netcdf(path, engine="h5netcdf",
                 encoding={"age": {"zlib": True, "complevel": 6, "dtype": "float32"}})



# ----------------------------------------------------------------------------------------
# running the whole job on the demo
# ----------------------------------------------------------------------------------------
OUTPUTS = ("check.json", "cooling.csv", "torques.csv", "fits", "rank.csv", "rank.json",
           "predicted.csv", "field.nc", "boundary_motion.csv", "maps", "report.html",
           "report.md")


def run(main, outdir, force: bool = False, echo=print) -> dict:
    """Run the whole job on the demo world; write everything into ``outdir``.

    ``main`` is the command line's entry point (``torque.cli.main``), passed in so that the
    demo runs exactly what users run without importing the command line (no cycle).
    ``outdir`` must be empty (or missing) unless ``force``; even then only the files this
    run writes are replaced, and nothing is deleted.
    """
    import contextlib
    import io
    import time

    from .errors import InputError, check_output_path

    outdir = Path(outdir)
    if outdir.exists() and not outdir.is_dir():
        raise InputError("exists and is not a folder", file=outdir)
    check_output_path(outdir / "report.html")     # refuses a folder under a file
    if outdir.is_dir() and any(outdir.iterdir()) and not force:
        raise InputError("the folder holds other files; torque demo writes only into an empty "
                         "folder", file=outdir,
                         hint="choose a new folder, or pass --force to overwrite torque's own "
                         "output names there (nothing is ever deleted)")
    outdir.mkdir(parents=True, exist_ok=True)
    t0 = time.perf_counter()
    src = BUNDLED
    if not (src / "world.toml").is_file():
        src = outdir / "world"
        echo(f"generating the demo world in {src}")
        write(src)
    world = src / "world.toml"
    motions = src / "motions.csv"
    hyps = sorted((src / "hypotheses").glob("*.toml"))
    truth = json.loads((src / "truth.json").read_text())

    def step(*argv):
        buf = io.StringIO()
        with contextlib.redirect_stdout(buf):
            status = main([str(a) for a in argv])
        if status != 0:
            raise InputError(f"demo step 'torque {argv[0]}' failed (status {status})")
        return buf.getvalue()

    (outdir / "fits").mkdir(exist_ok=True)
    (outdir / "maps").mkdir(exist_ok=True)
    _write_text(outdir / "check.json", step("check", world, "--json"))
    step("cooling", "-o", outdir / "cooling.csv")
    for h in hyps:
        extra = (["--bootstrap", "200", "--monte-carlo", "1000", "--seed", "1"]
                 if h.stem == TRUTH_HYPOTHESIS else [])
        step("fit", world, h, motions, "-o", outdir / "fits" / f"{h.stem}.json", *extra)
    step("rank", world, motions, *hyps, "-o", outdir / "rank.csv", "--json",
         outdir / "rank.json")
    rank = json.loads((outdir / "rank.json").read_text())
    fits = {h.stem: json.loads((outdir / "fits" / f"{h.stem}.json").read_text())
            for h in hyps}
    by_name = {f["hypothesis"]: stem for stem, f in fits.items()}
    best = by_name[rank["rows"][0]["name"]]
    best_hyp = src / "hypotheses" / f"{best}.toml"
    step("torques", world, best_hyp, "--motions", motions, "-o", outdir / "torques.csv")
    step("predict", world, best_hyp, "--coefficients", outdir / "fits" / f"{best}.json",
         "-o", outdir / "predicted.csv")
    step("field", world, motions, "--step", "1", "-o", outdir / "field.nc")
    step("boundaries", world, motions, "-o", outdir / "boundary_motion.csv")
    figures = draw_maps(outdir, world, motions, outdir / "predicted.csv", best_hyp,
                        outdir / "fits" / f"{best}.json")

    from .report import write_html, write_markdown
    fit = fits[best]
    rows = rank["rows"]
    summary = [
        f"{len(fit['plates'])} plates on the invented planet Orrery; every number here comes "
        "from synthetic data made by the forward model (truth.json).",
        f"best hypothesis: {rows[0]['name']} (RMS velocity misfit "
        f"{rows[0]['rms_velocity_mm_yr']:.2f} mm/yr, variance reduction "
        f"{100 * rows[0]['variance_reduction']:.2f} %).",
        "true coefficients: " + ", ".join(f"{k} {v:g}" for k, v in
                                          truth["true_coefficients"].items()) + ".",
        "fitted: " + ", ".join(f"{k} {c['value']:.4g} ± {c['stderr']:.2g}"
                               for k, c in fit["coefficients"].items() if c["free"]) + ".",
    ]
    run_info = {"world": "Orrery (synthetic demo)", "summary": summary, "truth": truth,
                "rank": rows, "fits": {f["hypothesis"]: f for f in fits.values()},
                "figures": figures}
    run_info["fits"] = {r["name"]: run_info["fits"][r["name"]] for r in rows}
    write_markdown(outdir / "report.md", run_info)
    write_html(outdir / "report.html", run_info, outdir)
    elapsed = time.perf_counter() - t0
    echo(f"torque demo: the whole job on the invented planet Orrery ({elapsed:.0f} s)")
    for line in summary[1:]:
        echo(f"  {line}")
    echo(f"  world and data:   {src}")
    for name, what in (("check.json", "world check"), ("cooling.csv", "cooling table"),
                       ("torques.csv", "torques of the best hypothesis"),
                       ("fits/", "fits of every hypothesis"), ("rank.csv", "ranking"),
                       ("predicted.csv", "predicted Euler vectors"),
                       ("field.nc", "velocity field"),
                       ("boundary_motion.csv", "relative motion along boundaries"),
                       ("maps/", "maps and charts"), ("report.html", "report (one file)"),
                       ("report.md", "report summary")):
        echo(f"  {what + ':':<34}{outdir / name}")
    echo("  caution: synthetic data; results of this tool are model-dependent research "
         "estimates, not for hazard or engineering use")
    return {"outdir": str(outdir), "best": rows[0]["name"], "seconds": elapsed}


def _write_text(path, text):
    from .errors import atomic_write
    with atomic_write(path) as fh:
        fh.write(text)


def draw_maps(outdir, world_path, motions_path, predicted_path, hyp_path, fit_path):
    """Every map and chart of the demo; returns (title, relative path) pairs."""
    from . import maps
    from .continents import read_continents
    from .euler import read_motions
    from .forces import compute_torques
    from .hypothesis import load_hypothesis
    from .world import load_world
    world = load_world(world_path)
    cont = (read_continents(world.paths["continents"], world.winding)
            if "continents" in world.paths else None)
    obs = read_motions(motions_path).for_world(world)
    pred = read_motions(predicted_path).for_world(world)
    hyp = load_hypothesis(hyp_path)
    terms = compute_torques(world, hyp, obs)
    from .io import fit_values, read_fit
    fit = read_fit(fit_path, world.plate_names)
    coefs = fit_values(fit, [t.label for t in terms], fit_path)
    m = Path(outdir) / "maps"
    figs = [("Plates and boundaries", maps.plates_map(world, m / "plates.png", cont)),
            ("Velocities, observed and predicted",
             maps.velocity_map(world, m / "velocities.png", obs, pred, cont)),
            ("Euler poles with 95 % ellipses", maps.poles_map(world, m / "poles.png", fit)),
            ("Velocity misfit", maps.misfit_map(world, m / "misfit.png", obs, pred)),
            ("Force budget", maps.budget_chart(m / "budget.png", fit)),
            ("Torques", maps.torque_chart(m / "torques.png", world, terms, coefs, obs))]
    return [(t, str(Path(p).relative_to(outdir))) for t, p in figs]
