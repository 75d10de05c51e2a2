"""One benchmark of the whole job, side by side with the approach researchers write by hand.

    python scripts/bench.py            # full run (a few minutes)
    python scripts/bench.py --quick    # short run (smaller world, fewer repeats)

1. Builds a synthetic Earth-sized world (deterministic): about 60 plates with at least
   100,000 boundary vertices, boundaries of every kind, continents, a 0.1 degree age grid
   and a 1 degree mantle flow grid, and writes it to files.
2. Times every stage of the job as the median of repeated runs: loading and checking,
   exact moments, all torques (every force kind), fit, prediction, a 1,000,000-point
   velocity field and a 10,000-member Monte Carlo.
3. Runs the hand-written baseline in the same process on the same world: a lon/lat grid
   at 1, 0.5 and 0.25 degrees, a shapely point-in-polygon test per cell and plate, and
   sums over cells for the drag tensors and the drag torques; reports its time, its error
   against the exact result and the ratio of times.
4. Prints a Markdown table, writes it with everything else to bench_results/bench.json,
   and plots how time grows with vertices and grid cells (bench_results/scaling.png).
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import resource
import sys
import tempfile
import time
from dataclasses import replace
from pathlib import Path

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402
import shapely  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent))
import synthetic_world as sw  # noqa: E402
from bench_balance import TRUE as BALANCE_TRUE  # noqa: E402
from bench_torques import HYPOTHESIS  # noqa: E402

from torque import inference, sphere  # noqa: E402
from torque.euler import RAD_S_PER_DEG_MYR, velocity_field  # noqa: E402
from torque import compute_torques  # noqa: E402
from torque.hypothesis import hypothesis_from_dict  # noqa: E402
from torque.io import write_boundaries_geojson  # noqa: E402
from torque.inference.resampling import monte_carlo_motions
from torque.polygons import region_moments  # noqa: E402
from torque import check_world  # noqa: E402
from torque.io import load_world
from torque.world import PlateGeometry  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]


def median_time(fn, repeat):
    times = []
    out = None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return float(np.median(times)), out


def fresh(world):
    g = world.geometry
    return replace(world, geometry=PlateGeometry(g.xyz, g.ring_start, g.ring_plate,
                                                 g.ring_is_hole, g.ring_polygon, g.n_plates))


# ----------------------------------------------------------------------------------------
# writing the synthetic world to files
# ----------------------------------------------------------------------------------------
def write_world(world, ages, flow, cont, folder: Path):
    import xarray as xr
    g = world.geometry
    feats = []
    for p in world.plates:
        ring = g.xyz[g.ring_start[p.index]:g.ring_start[p.index + 1]]
        lon, lat = sphere.xyz_to_lonlat(ring)
        coords = np.round(np.c_[lon, lat], 12).tolist()
        feats.append({"type": "Feature", "properties": {"plate": p.name},
                      "geometry": {"type": "Polygon", "coordinates": [coords + [coords[0]]]}})
    (folder / "plates.geojson").write_text(json.dumps({"type": "FeatureCollection",
                                                       "features": feats}))
    write_boundaries_geojson(folder / "boundaries.geojson", world.boundaries)
    cfeats = []
    rs = cont.ring_start
    for r in range(len(rs) - 1):
        lon, lat = sphere.xyz_to_lonlat(cont.xyz[rs[r]:rs[r + 1]])
        c = np.c_[lon, lat].tolist()
        cfeats.append({"type": "Feature", "properties": {},
                       "geometry": {"type": "Polygon", "coordinates": [c + [c[0]]]}})
    (folder / "continents.geojson").write_text(json.dumps({"type": "FeatureCollection",
                                                           "features": cfeats}))
    xr.Dataset({"age": (("lat", "lon"), ages.age_myr.astype(np.float32))},
               coords={"lon": ages.lon, "lat": ages.lat}).to_netcdf(
        folder / "ages.nc", engine="h5netcdf")
    xr.Dataset({"ve_mm_yr": (("lat", "lon"), flow.ve_mm_yr),
                "vn_mm_yr": (("lat", "lon"), flow.vn_mm_yr)},
               coords={"lon": flow.lon, "lat": flow.lat}).to_netcdf(
        folder / "flow.nc", engine="h5netcdf")
    (folder / "world.toml").write_text(
        'plates = "plates.geojson"\nboundaries = "boundaries.geojson"\n'
        'continents = "continents.geojson"\nages = "ages.nc"\nmantle_flow = "flow.nc"\n')
    return folder / "world.toml"


# ----------------------------------------------------------------------------------------
# the hand-written baseline
# ----------------------------------------------------------------------------------------
def baseline_polygons(world):
    """Lon/lat shapely polygons as a careful researcher builds them: longitudes unwrapped,
    and rings round a pole closed through that pole. Edges are straight in lon/lat."""
    g = world.geometry
    polys = []
    for p in world.plates:
        ring = g.xyz[g.ring_start[p.index]:g.ring_start[p.index + 1]]
        lon, lat = sphere.xyz_to_lonlat(np.r_[ring, ring[:1]])      # closed
        lon = np.degrees(np.unwrap(np.radians(lon)))
        sweep = lon[-1] - lon[0]
        if abs(sweep) > 180:
            # a ring walked east round the plate encircles the north pole, west the south
            pole = 90.0 if sweep > 0 else -90.0
            lon = np.r_[lon, lon[-1], lon[0]]
            lat = np.r_[lat, pole, pole]
        polys.append(shapely.Polygon(np.c_[lon, lat]))
    return polys


def baseline(world, polys, step, omega):
    """Drag tensors and drag torques by grid quadrature with a per-cell plate test."""
    lon = np.arange(-180 + step / 2, 180, step)
    lat = np.arange(-90 + step / 2, 90, step)
    LON, LAT = np.meshgrid(lon, lat)
    LON, LAT = LON.ravel(), LAT.ravel()
    xyz = sphere.lonlat_to_xyz(LON, LAT)
    dA = np.radians(step) ** 2 * np.cos(np.radians(LAT))
    P = len(polys)
    D = np.zeros((P, 3, 3))
    for p, poly in enumerate(polys):
        shapely.prepare(poly)
        inside = np.zeros(len(LON), bool)
        for shift in (-360.0, 0.0, 360.0):          # the unwrapped ring may leave [-180, 180]
            inside |= shapely.contains_xy(poly, LON + shift, LAT)
        r = xyz[inside]
        w = dA[inside]
        D[p] = w.sum() * np.eye(3) - np.einsum("n,ni,nj->ij", w, r, r)
    R = world.radius_m
    torque = -R ** 4 * np.einsum("pij,pj->pi", D, omega)
    return D, torque


# ----------------------------------------------------------------------------------------
SIZES = {
    # name: plates, vertices, age step, field points, MC members, baseline steps,
    #       scaling vertex counts, scaling age steps, repeats
    "full": dict(plates=60, vertices=100_000, age_step=0.1, points=1_000_000, mc=10_000,
                 steps=(1.0, 0.5, 0.25), scale_vertices=(10_000, 30_000, 100_000, 300_000),
                 scale_steps=(1.0, 0.5, 0.25, 0.1), repeat=5),
    "quick": dict(plates=60, vertices=30_000, age_step=0.5, points=200_000, mc=2_000,
                  steps=(1.0,), scale_vertices=(10_000, 30_000), scale_steps=(1.0, 0.5),
                  repeat=2),
    # the test suite runs this one, untimed, so that a change that breaks the harness
    # fails CI
    "tiny": dict(plates=12, vertices=2_000, age_step=4.0, points=2_000, mc=20,
                 steps=(6.0,), scale_vertices=(1_000, 2_000), scale_steps=(6.0,),
                 repeat=1),
}


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--quick", action="store_true", help="short run")
    ap.add_argument("--size", choices=sorted(SIZES), help="run size (overrides --quick)")
    ap.add_argument("--out", default=str(ROOT / "bench_results"), help="output folder")
    args = ap.parse_args(argv)
    size = args.size or ("quick" if args.quick else "full")
    table = run(size, Path(args.out))
    print(table)


def run(size, out):
    """Run the harness at one of the ``SIZES`` and write its results into ``out``."""
    cfg = SIZES[size]
    quick = size != "full"
    out.mkdir(parents=True, exist_ok=True)
    rep = cfg["repeat"]
    n_plates = cfg["plates"]
    n_vert = cfg["vertices"]
    age_step = cfg["age_step"]
    n_points = cfg["points"]
    n_mc = cfg["mc"]
    steps = cfg["steps"]

    t_build = time.perf_counter()
    world = sw.world(n_plates, n_vert)
    ages, flow, cont = sw.ages(age_step), sw.flow(1.0), sw.continents()
    omega_true = sw.motions(n_plates)
    t_build = time.perf_counter() - t_build
    rows, results = [], {}

    def row(stage, size, seconds, target=None, met=None):
        rows.append((stage, size, seconds, target, met))
        results[stage] = {"size": size, "seconds": seconds, "target": target, "met": met}

    with tempfile.TemporaryDirectory() as tmp:
        path = write_world(world, ages, flow, cont, Path(tmp))
        t, w = median_time(lambda: load_world(path), rep)
        row("load world files", f"{len(world.geometry.xyz):,} vertices", t)
        t, rep_check = median_time(lambda: check_world(load_world(path)), max(1, rep // 2))
        if not rep_check.ok:
            raise RuntimeError("the synthetic world fails torque check: "
                               + "; ".join(str(p) for p in rep_check.problems[:3]))
        row("load and check (all checks)", f"{len(world.geometry.xyz):,} vertices", t)

    g = world.geometry
    P = g.n_plates
    t, _ = median_time(lambda: region_moments(g.xyz, g.ring_start, g.ring_plate,
                                              g.ring_is_hole, P), rep * 3)
    rate = len(g.xyz) / t
    row("exact moments", f"{len(g.xyz):,} vertices", t, ">= 2 M vertices/s",
        f"{rate / 1e6:.1f} M vertices/s")

    hyp = hypothesis_from_dict(HYPOTHESIS)
    t, terms = median_time(lambda: compute_torques(fresh(world), hyp, omega_true, ages=ages,
                                                   flow=flow, continents=cont), rep)
    row("all torques (11 terms, every kind)",
        f"{ages.age_myr.size:,} age nodes", t, "<= 3 s (0.1 degree grid)",
        (t <= 3.0) if age_step == 0.1 else "target is for 0.1 degree: see the full run")

    # the balance on a hypothesis with known true coefficients
    truth = hypothesis_from_dict({"force": BALANCE_TRUE})
    sys_true = inference.assemble(world, truth, compute_torques(world, truth, np.zeros((P, 3))))
    om = inference.predict(sys_true, sys_true.fixed)
    rng = np.random.default_rng(0)
    sigma = 0.01 * RAD_S_PER_DEG_MYR
    obs = om + sigma * rng.standard_normal(om.shape)
    free = [dict(f, coefficient="free") if i else dict(f) for i, f in enumerate(BALANCE_TRUE)]
    hyp_free = hypothesis_from_dict({"force": free})
    system = inference.assemble(world, hyp_free, compute_torques(world, hyp_free, obs))
    t_fit, rpt = median_time(lambda: inference.fit_velocity(system, obs,
                                                          inference.fit_torque(system, obs)),
                             rep * 4)
    t_pred, _ = median_time(lambda: inference.predict(system, rpt.values), rep * 4)
    row("fit (torque + velocity space)", f"{P} plates, {system.n_free} free", t_fit)
    row("prediction", f"{P} plates", t_pred, "fit + prediction <= 50 ms",
        t_fit + t_pred <= 0.05)
    cov = np.broadcast_to(sigma ** 2 * np.eye(3), (P, 3, 3)).copy()
    t, _ = median_time(lambda: monte_carlo_motions(system, obs, cov, n_mc, seed=1,
                                                   fit="torque"), max(1, rep // 2))
    row("Monte Carlo over motions (torque-space refits)", f"{n_mc:,} members", t,
        "<= 10 s for 10,000", t * 10_000 / n_mc <= 10)
    n_v = max(20, n_mc // 50)
    t, _ = median_time(lambda: monte_carlo_motions(system, obs, cov, n_v, seed=1), 1)
    row("Monte Carlo over motions (velocity-space refits, the default)", f"{n_v:,} members",
        t)

    lon = rng.uniform(-180, 180, n_points)
    lat = np.degrees(np.arcsin(rng.uniform(-1, 1, n_points)))
    wf = fresh(world)
    wf.geometry.locator
    t, _ = median_time(lambda: velocity_field(wf, om, lon, lat), rep)
    row("velocity field (assignment included)", f"{n_points:,} points", t,
        ">= 1 M points/s", f"{n_points / t / 1e6:.1f} M points/s")
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024

    # the baseline
    exact_D = (g.moments[0][:, None, None] * np.eye(3) - g.moments[2])
    exact_T = -world.radius_m ** 4 * np.einsum("pij,pj->pi", exact_D, om)
    t_exact, _ = median_time(lambda: region_moments(g.xyz, g.ring_start, g.ring_plate,
                                                    g.ring_is_hole, P), rep * 3)
    polys = baseline_polygons(world)
    base = []
    for step in steps:
        t, (D, T) = median_time(lambda: baseline(world, polys, step, om), 1)
        errD = np.linalg.norm(D - exact_D, axis=(1, 2)) / np.linalg.norm(exact_D, axis=(1, 2))
        errT = np.linalg.norm(T - exact_T, axis=1) / np.linalg.norm(exact_T, axis=1)
        base.append({"step_deg": step, "seconds": t,
                     "drag_tensor_error_median": float(np.median(errD)),
                     "drag_tensor_error_max": float(np.max(errD)),
                     "torque_error_median": float(np.median(errT)),
                     "torque_error_max": float(np.max(errT)),
                     "times_slower_than_exact": t / t_exact})

    # scaling
    scale = {"vertices": [], "moments_s": [], "grid_nodes": [], "torques_s": []}
    for nv in cfg["scale_vertices"]:
        wv = sw.world(n_plates, nv)
        gv = wv.geometry
        tv, _ = median_time(lambda: region_moments(gv.xyz, gv.ring_start, gv.ring_plate,
                                                   gv.ring_is_hole, n_plates), 3)
        scale["vertices"].append(len(gv.xyz))
        scale["moments_s"].append(tv)
    dist = hypothesis_from_dict({"force": [{"kind": "ridge"}]})
    for st in cfg["scale_steps"]:
        a = sw.ages(st)
        tv, _ = median_time(lambda: compute_torques(fresh(world), dist, omega_true, ages=a), 2)
        scale["grid_nodes"].append(int(a.age_myr.size))
        scale["torques_s"].append(tv)
    plot_scaling(scale, out / "scaling.png")

    machine = (f"{platform.machine()}, {os.cpu_count()} cores (one used), Python "
               f"{platform.python_version()}, numpy {np.__version__}")
    table = markdown(rows, base, t_exact, machine, peak_mb, size)
    (out / "bench.json").write_text(json.dumps({
        "machine": machine, "quick": quick, "world_build_s": t_build,
        "stages": results, "baseline": base, "exact_moments_s": t_exact,
        "peak_memory_mb": peak_mb, "scaling": scale, "table": table}, indent=2) + "\n")
    (out / "bench.md").write_text(table + "\n")
    return table


def markdown(rows, base, t_exact, machine, peak_mb, size):
    lines = [f"Machine: {machine}. {size.capitalize()} run.", "",
             "| stage | size | median time | target | where we stand |", "|---|---|---|---|---|"]
    for stage, size, t, target, met in rows:
        stand = ("" if met is None else ("met" if met is True else
                                         ("not met" if met is False else met)))
        tt = f"{t * 1e3:.1f} ms" if t < 1 else f"{t:.2f} s"
        lines.append(f"| {stage} | {size} | {tt} | {target or ''} | {stand} |")
    lines += ["", f"Peak memory of the job: {peak_mb:.0f} MB.", "",
              "Hand-written baseline (lon/lat grid, shapely test per cell and plate) against "
              f"the exact drag tensors ({t_exact * 1e3:.1f} ms for all plates):", "",
              "| grid | time | times slower | drag tensor error (median / max) | "
              "drag torque error (median / max) |", "|---|---|---|---|---|"]
    for b in base:
        lines.append(f"| {b['step_deg']:g} deg | {b['seconds']:.2f} s | "
                     f"{b['times_slower_than_exact']:,.0f} | "
                     f"{100 * b['drag_tensor_error_median']:.3f} % / "
                     f"{100 * b['drag_tensor_error_max']:.3f} % | "
                     f"{100 * b['torque_error_median']:.3f} % / "
                     f"{100 * b['torque_error_max']:.3f} % |")
    return "\n".join(lines)


def plot_scaling(scale, path):
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    fig, (a, b) = plt.subplots(1, 2, figsize=(9, 3.5))
    a.loglog(scale["vertices"], scale["moments_s"], "o-", color="#1B2F6B")
    a.set_xlabel("vertices")
    a.set_ylabel("exact moments (s)")
    a.set_title("time against vertices")
    b.loglog(scale["grid_nodes"], scale["torques_s"], "o-", color="#B3261E")
    b.set_xlabel("age grid nodes")
    b.set_ylabel("distributed ridge push, s\n(point locator set-up included)")
    b.set_title("time against grid nodes")
    for ax in (a, b):
        ax.grid(True, which="both", alpha=0.3)
    fig.tight_layout()
    fig.savefig(path, dpi=100)
    plt.close(fig)


if __name__ == "__main__":
    main()
