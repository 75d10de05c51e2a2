"""The ``torque`` command: a thin layer over the library.

Every command reads its inputs, calls the library, and writes its outputs through
:func:`torque.errors.atomic_write`. Bad input raises :class:`torque.errors.InputError`,
which ends here as one message on stderr and exit status 2.
"""

from __future__ import annotations

import argparse
import json
import sys

import numpy as np

from .errors import InputError

EXIT_OK, EXIT_BAD_INPUT = 0, 2


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # usage errors: exit 2 with a short message, no traceback
        self.print_usage(sys.stderr)
        self.exit(EXIT_BAD_INPUT, f"torque: error: {message}\n")


def _finite(obj):
    """A copy of ``obj`` for JSON: numpy values as Python ones, NaN and infinities as None
    (JSON has no token for them; a bare ``NaN`` makes the file unreadable elsewhere)."""
    if isinstance(obj, dict):
        return {k: _finite(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_finite(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return _finite(obj.tolist())
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, float) and not np.isfinite(obj):
        return None
    return obj


def dumps(obj) -> str:
    """JSON text (strict: no NaN tokens) of results holding numpy values."""
    return json.dumps(_finite(obj), indent=2, allow_nan=False)


# ----------------------------------------------------------------------------------------
# check
# ----------------------------------------------------------------------------------------
def _cmd_check(args) -> int:
    from .validate import check_world
    from .world import load_world

    world = load_world(args.world)
    report = check_world(world)
    if args.json:
        print(dumps(report.as_dict()))
    else:
        print(format_check(report))
    if not report.ok:
        n = sum(p.severity == "error" for p in report.problems)
        print(f"torque check: {args.world}: {n} error(s); the world cannot be used as it is",
              file=sys.stderr)
        return EXIT_BAD_INPUT
    return EXIT_OK


def format_check(report) -> str:
    """Human summary of a :class:`torque.validate.CheckReport`."""
    d = report.as_dict()
    R = d["radius_m"]
    lines = [f"world {d['world']!r}: radius {R / 1e3:.1f} km, {len(d['plates'])} plates, "
             f"{d['boundaries']['count']} boundary lines"
             + (" (derived from shared edges)" if d["boundaries"]["derived"] else ""),
             f"total area {d['total_area_m2']:.6e} m2 = "
             f"{d['total_area_m2'] / d['sphere_area_m2']:.12f} of the sphere", ""]
    w = max(5, *(len(p["plate"]) for p in d["plates"]))
    lines.append(f"{'plate':<{w}}  {'area km2':>12}  {'share':>6}  {'centroid lon':>12}  "
                 f"{'lat':>7}  {'vertices':>8}  neighbours")
    for p in d["plates"]:
        lines.append(f"{p['plate']:<{w}}  {p['area_m2'] / 1e6:12.4e}  "
                     f"{100 * p['area_fraction']:5.2f}%  {p['centroid_lon']:12.3f}  "
                     f"{p['centroid_lat']:7.3f}  {p['vertices']:8d}  "
                     f"{', '.join(p['neighbours'])}")
    if d["boundaries"]["length_m_by_kind"]:
        lines.append("")
        lines.append("boundary length by kind: " + ", ".join(
            f"{k} {v / 1e3:,.0f} km" for k, v in sorted(d["boundaries"]["length_m_by_kind"]
                                                       .items())))
    lines.append("")
    if report.problems:
        lines += [str(p) for p in report.problems]
    else:
        lines.append("no problems found")
    return "\n".join(lines)


# ----------------------------------------------------------------------------------------
# kinematics: frame, field, boundaries
# ----------------------------------------------------------------------------------------
def _world(path):
    from .validate import require_valid
    from .world import load_world
    return require_valid(load_world(path))


def _pole_text(omega) -> str:
    from .euler import vector_to_pole
    lat, lon, rate = vector_to_pole(omega)
    return f"pole {float(lat):.4f} N, {float(lon):.4f} E, rate {float(rate):.6f} deg/Myr"


def _cmd_frame(args) -> int:
    from .euler import net_rotation, read_motions, to_no_net_rotation, write_motions
    from .io import output_suffix

    output_suffix(args.output, (".csv",))
    world = _world(args.world)
    motions = read_motions(args.motions)
    omega = motions.for_world(world)
    target = args.to
    if target == "nnr":
        out, w_net = to_no_net_rotation(world, motions)
    elif target.startswith("plate:"):
        w_net = net_rotation(world, omega)
        name = target[len("plate:"):]
        if name not in world.plate_index:
            raise InputError(f"--to {target}: no plate named {name!r}",
                             file=args.world, hint=f"plates are {', '.join(world.plate_names)}")
        out = motions.relative_to(name)
    else:
        raise InputError(f"--to {target!r} is not a frame",
                         hint="use --to nnr or --to plate:NAME")
    write_motions(args.output, out, world.plate_names)
    new_net = net_rotation(world, out.for_world(world))
    print(f"net rotation of {args.motions}: {_pole_text(w_net)}")
    print(f"net rotation in the new frame: {_pole_text(new_net)}")
    print(f"wrote {args.output}")
    return EXIT_OK


def _cmd_field(args) -> int:
    from .errors import require_memory
    from .euler import grid_lonlat, read_motions, speed_azimuth, velocity_field
    from .io import (FIELD_SUFFIXES, output_suffix, read_points, write_csv, write_netcdf,
                     write_points_geojson)

    suffix = output_suffix(args.output, FIELD_SUFFIXES)
    world = _world(args.world)
    omega = read_motions(args.motions).for_world(world)
    if args.points:
        lon, lat = read_points(args.points)
        grid = None
    else:
        n = int(np.ceil(360 / args.step)) * int(np.ceil(180 / args.step))
        # coordinates, unit vectors, plate, velocities and the text of every row
        require_memory(n * 200.0, f"a velocity field at --step {args.step:g} ({n:,} points)",
                       hint="use a larger --step")
        glon, glat = grid_lonlat(args.step)
        LON, LAT = np.meshgrid(glon, glat)
        lon, lat = LON.ravel(), LAT.ravel()
        grid = (glon, glat)
    plate, ve, vn = velocity_field(world, omega, lon, lat)
    speed, azimuth = speed_azimuth(ve, vn)
    names = np.array(world.plate_names, dtype=object)[plate]
    if suffix == ".csv":
        write_csv(args.output, {"lon": lon, "lat": lat, "plate": names, "ve_mm_yr": ve,
                                "vn_mm_yr": vn, "speed_mm_yr": speed, "azimuth_deg": azimuth})
    elif suffix in (".geojson", ".json"):
        write_points_geojson(args.output, lon, lat, {
            "plate": names, "ve_mm_yr": ve, "vn_mm_yr": vn, "speed_mm_yr": speed,
            "azimuth_deg": azimuth})
    else:
        write_netcdf(args.output, field_dataset(world, lon, lat, plate, ve, vn, grid))
    print(f"velocity at {len(lon):,} points: speed {speed.min():.2f} to {speed.max():.2f} "
          f"mm/yr, mean {speed.mean():.2f} mm/yr; wrote {args.output}")
    return EXIT_OK


def field_dataset(world, lon, lat, plate, ve, vn, grid=None):
    """An xarray Dataset of a velocity field, CF-style (on the grid if one is given)."""
    import xarray as xr

    names = world.plate_names
    attrs_plate = {"long_name": "plate holding the point (index into plate_names)",
                   "flag_values": np.arange(len(names), dtype=np.int16),
                   "plate_names": json.dumps(names)}
    v_attrs = lambda d: {"units": "mm/yr", "long_name": f"{d} velocity of the plate"}  # noqa
    if grid is not None:
        glon, glat = grid
        shape = (len(glat), len(glon))
        dims = ("lat", "lon")
        coords = {"lon": ("lon", glon, {"units": "degrees_east", "standard_name": "longitude"}),
                  "lat": ("lat", glat, {"units": "degrees_north", "standard_name": "latitude"})}
    else:
        shape = (len(lon),)
        dims = ("point",)
        coords = {"lon": ("point", lon, {"units": "degrees_east", "standard_name": "longitude"}),
                  "lat": ("point", lat, {"units": "degrees_north",
                                         "standard_name": "latitude"})}
    ds = xr.Dataset(
        {"ve_mm_yr": (dims, ve.reshape(shape), v_attrs("eastward")),
         "vn_mm_yr": (dims, vn.reshape(shape), v_attrs("northward")),
         "plate": (dims, plate.reshape(shape).astype(np.int16), attrs_plate)},
        coords=coords,
        attrs={"Conventions": "CF-1.8", "title": f"plate velocity field of {world.name}",
               "source": "torque", "radius_m": world.radius_m,
               "caution": "model-dependent research estimate"})
    return ds


def _cmd_boundaries(args) -> int:
    from .errors import require_memory
    from .euler import read_motions
    from .grids import read_ages
    from .io import output_suffix, write_boundaries_geojson, write_csv
    from .margins import (TRANSFORM_WITHIN_DEG, boundary_motion, classify, sample_boundaries,
                          with_kinds)
    from .sphere import angle_between, xyz_to_lonlat

    output_suffix(args.output, (".csv",))
    if args.geojson:
        output_suffix(args.geojson, (".geojson", ".json"))
    if not args.spacing_km > 0:
        raise InputError(f"--spacing-km must be positive, got {args.spacing_km:g}")
    world = _world(args.world)
    if not world.boundaries:
        raise InputError("the world has no boundaries", file=args.world)
    omega = read_motions(args.motions).for_world(world)
    length_m = sum(float(angle_between(b.xyz[:-1], b.xyz[1:]).sum())
                   for b in world.boundaries) * world.radius_m
    n = length_m / (args.spacing_km * 1e3)
    # points, poles, velocities and the text of every row
    require_memory(n * 400.0, f"--spacing-km {args.spacing_km:g} ({n:,.0f} samples)",
                   hint="use a larger --spacing-km")
    samples = sample_boundaries(world.boundaries, args.spacing_km * 1e3 / world.radius_m)
    motion = boundary_motion(world, omega, samples)
    boundaries = list(world.boundaries)
    unresolved = []
    if args.classify:
        ages = read_ages(world.paths["ages"]) if "ages" in world.paths else None
        kinds, sinking = classify(world, motion, ages)
        boundaries = with_kinds(world, kinds, sinking)
        unresolved = [k for k, b in enumerate(boundaries)
                      if b.kind == "subduction" and b.subducting is None]
    line = samples.line
    lon, lat = xyz_to_lonlat(samples.xyz)
    write_csv(args.output, {
        "lon": lon, "lat": lat, "line": line,
        "left": np.array([b.left for b in boundaries], dtype=object)[line],
        "right": np.array([b.right for b in boundaries], dtype=object)[line],
        "kind": np.array([b.kind for b in boundaries], dtype=object)[line],
        "subducting": np.array([b.subducting or ("unresolved" if k in unresolved else "")
                                for k, b in enumerate(boundaries)], dtype=object)[line],
        "opening_mm_yr": motion.opening_mm_yr, "along_mm_yr": motion.along_mm_yr,
        "obliquity_deg": motion.obliquity_deg})
    if args.geojson:
        write_boundaries_geojson(args.geojson, boundaries)
    kinds = {}
    for b in boundaries:
        kinds[b.kind] = kinds.get(b.kind, 0) + 1
    print(f"{len(lon):,} samples on {len(boundaries)} lines; kinds: "
          + ", ".join(f"{k} {n}" for k, n in sorted(kinds.items())))
    if args.classify:
        print(f"classified by mean motion: transform within {TRANSFORM_WITHIN_DEG:g} deg of "
              "pure strike-slip, else ridge (opening) or subduction (closing)")
        if unresolved:
            print(f"sinking plate unresolved (no sea-floor ages on either side) for "
                  f"{len(unresolved)} subduction line(s): {', '.join(map(str, unresolved))}; "
                  "give the world an age grid, or set 'subducting' by hand")
    print(f"wrote {args.output}" + (f" and {args.geojson}" if args.geojson else ""))
    return EXIT_OK



# ----------------------------------------------------------------------------------------
# physics: cooling, torques
# ----------------------------------------------------------------------------------------
DEFAULT_COOLING_AGES = (1, 2, 5, 10, 20, 30, 40, 50, 60, 80, 100, 120, 150, 200)


def _parse_ages(text):
    try:
        ages = [float(a) for a in text.split(",") if a.strip()]
    except ValueError:
        raise InputError(f"--ages must be numbers separated by commas, got {text!r}") from None
    bad = [a for a in ages if not (0 < a <= 300)]
    if not ages or bad:
        raise InputError(f"--ages must lie in (0, 300] Myr; got {bad or text!r}")
    return ages


def cooling_rows(hypothesis, ages):
    """The rows of ``torque cooling`` for a hypothesis (its physics and slab depth)."""
    from .forces.slab import DEFAULT_DEPTH_KM
    from .lithosphere import Cooling
    depth = next((f.options.get("depth_km") for f in hypothesis.forces
                  if f.kind == "slab" and "depth_km" in f.options), DEFAULT_DEPTH_KM)
    c = Cooling(hypothesis.physics)
    t = np.asarray(ages, float)
    cols = (t, c.depth_m(t), c.heat_flow_mw_m2(t), c.ridge_push_n_m(t),
            c.slab_pull_n_m(t, depth))
    keys = ("age_myr", "depth_m", "heat_flow_mw_m2", "ridge_push_n_m", "slab_pull_n_m")
    return [dict(zip(keys, map(float, row))) for row in zip(*cols)], depth


def _cmd_cooling(args) -> int:
    from .hypothesis import Hypothesis, load_hypothesis
    from .io import output_suffix, write_csv
    from .lithosphere import Physics

    if args.output:
        output_suffix(args.output, (".csv",))
    hyp = load_hypothesis(args.physics) if args.physics else Hypothesis("defaults", Physics(), ())
    ages = _parse_ages(args.ages) if args.ages else DEFAULT_COOLING_AGES
    rows, depth = cooling_rows(hyp, ages)
    p = hyp.physics
    if args.json:
        print(dumps({"model": p.model, "physics": p.__dict__, "slab_depth_km": depth,
                     "rows": rows}))
    else:
        print(f"{p.model} cooling model; slab pull for a slab reaching {depth:g} km")
        print(f"{'age Myr':>8} {'depth m':>9} {'heat flow mW/m2':>16} {'ridge push N/m':>15} "
              f"{'slab pull N/m':>14}")
        for r in rows:
            print(f"{r['age_myr']:8.1f} {r['depth_m']:9.1f} {r['heat_flow_mw_m2']:16.2f} "
                  f"{r['ridge_push_n_m']:15.4e} {r['slab_pull_n_m']:14.4e}")
    if args.output:
        write_csv(args.output, {k: np.array([r[k] for r in rows]) for k in rows[0]})
    return EXIT_OK


def _cmd_torques(args) -> int:
    from .euler import read_motions
    from .forces import compute_torques
    from .hypothesis import load_hypothesis
    from .io import output_suffix, write_csv

    output_suffix(args.output, (".csv",))
    world = _world(args.world)
    hyp = load_hypothesis(args.hypothesis)
    omega = read_motions(args.motions).for_world(world) if args.motions else None
    terms = compute_torques(world, hyp, omega)
    moving = [t.label for t in terms if t.velocity_dependent]
    if moving and omega is None:
        raise InputError(f"term(s) {', '.join(moving)} depend on the plates' motion",
                         file=args.hypothesis, hint="give the motions with --motions M.csv")
    plates, labels, coefs, tq = [], [], [], []
    for t in terms:
        c = 1.0 if t.spec.free else t.spec.coefficient
        torque = c * t.torque(omega)
        plates += world.plate_names
        labels += [t.label] * len(world.plates)
        coefs += [c] * len(world.plates)
        tq.append(torque)
    tq = np.concatenate(tq)
    write_csv(args.output, {"plate": np.array(plates, dtype=object),
                            "term": np.array(labels, dtype=object), "coefficient": np.array(coefs),
                            "tx_nm": tq[:, 0], "ty_nm": tq[:, 1], "tz_nm": tq[:, 2]})
    for t in terms:
        mag = np.linalg.norm(t.torque(omega), axis=1)
        print(f"{t.label:<16} {'free' if t.spec.free else 'fixed':<5} coefficient unit "
              f"{t.unit:<7} |torque| at coefficient 1: median {np.median(mag):.3e} N m")
        for note in t.notes:
            print(f"  note: {note}")
    print(f"wrote {args.output} ({len(plates)} rows)")
    return EXIT_OK


# ----------------------------------------------------------------------------------------
# the balance: fit, predict, rank
# ----------------------------------------------------------------------------------------
class _Problem:
    """A world, a hypothesis and (optionally) observed motions, with their force terms."""

    def __init__(self, world_path, hyp_path, motions_path=None):
        from .balance import assemble
        from .euler import read_motions
        from .forces import Context, build_terms
        from .hypothesis import load_hypothesis

        self.world = _world(world_path)
        self.hyp = load_hypothesis(hyp_path)
        self.hyp_path = hyp_path
        self.motions = read_motions(motions_path) if motions_path else None
        self.omega = self.motions.for_world(self.world) if self.motions else None
        self.ctx = Context(self.world, self.hyp, self.omega)
        self.terms = build_terms(self.ctx)
        self.system = assemble(self.world, self.hyp, self.terms)

    def rebuild(self, physics):
        """The system for other physics, reusing ages, continents and flow."""
        import dataclasses

        from .balance import assemble
        from .forces import Context, build_terms
        hyp = dataclasses.replace(self.hyp, physics=physics)
        data = {"continents": self.ctx.continents}
        if "ages" in self.ctx.__dict__:
            data["ages"] = self.ctx.ages[0]
        if "flow" in self.ctx.__dict__:
            data["flow"] = self.ctx.flow
        ctx = Context(self.world, hyp, self.omega, **data)
        return assemble(self.world, hyp, build_terms(ctx))

    def notes(self):
        return [n for t in self.terms for n in t.notes]


def _cmd_fit(args) -> int:
    from .balance import analyse
    from .errors import atomic_write
    from .io import output_suffix
    from .resample import bootstrap, monte_carlo_motions, monte_carlo_physics

    output_suffix(args.output, (".json",))
    pb = _Problem(args.world, args.hypothesis, args.motions)
    if args.monte_carlo and pb.motions.cov is None:
        raise InputError("a Monte Carlo over motions needs their covariance: the file has no "
                         "cov_xx ... cov_zz columns", file=args.motions,
                         hint="add them in (deg/Myr)^2, or leave out --monte-carlo")
    if args.physics_samples and not pb.hyp.spread:
        raise InputError("a Monte Carlo over physics needs a [spread] table",
                         file=args.hypothesis, hint="add one, or leave out --physics-samples")
    _require_sample_memory(pb.system, args)
    rep = analyse(pb.system, pb.omega, args.weighting)
    unc = {}
    if args.bootstrap:
        unc["bootstrap"] = bootstrap(pb.system, pb.omega, args.bootstrap, args.seed,
                                     args.weighting)
    if args.monte_carlo:
        unc["monte_carlo_motions"] = monte_carlo_motions(
            pb.system, pb.omega, pb.motions.cov_for_world(pb.world), args.monte_carlo,
            args.seed, args.weighting)
    if args.physics_samples:
        unc["monte_carlo_physics"] = monte_carlo_physics(
            pb.rebuild, pb.hyp.physics, pb.hyp.spread, pb.omega, args.physics_samples,
            args.seed, args.weighting)
    import dataclasses
    rep = dataclasses.replace(rep, uncertainty=unc)
    out = rep.as_dict()
    out["notes"] = pb.notes()
    with atomic_write(args.output) as fh:
        fh.write(dumps(out))
    _print_fit(out)
    print(f"wrote {args.output}")
    return EXIT_OK


def _print_fit(d):
    print(f"hypothesis {d['hypothesis']!r}: velocity-space fit (preferred) and torque-space fit")
    print(f"{'term':<16} {'value':>12} {'stderr':>10} {'torque-space':>13} {'unit':<8}")
    for label, c in d["coefficients"].items():
        if c["free"]:
            print(f"{label:<16} {c['value']:12.4e} {c['stderr']:10.2e} "
                  f"{c['torque_space_value']:13.4e} {c['unit']:<8}")
        else:
            print(f"{label:<16} {c['value']:12.4e} {'fixed':>10} {'':>13} {c['unit']:<8}")
    m = d["misfit"]
    print(f"RMS velocity misfit {m['rms_velocity_mm_yr']:.3f} mm/yr, variance reduction "
          f"{100 * m['variance_reduction']:.2f} %, AIC {m['aic']:.2f}, BIC {m['bic']:.2f}")
    if m["active_bounds"]:
        print(f"at a bound: {', '.join(m['active_bounds'])}")
    for note in d.get("notes", []):
        print(f"note: {note}")
    print("caution: model-dependent research estimates, not for hazard or engineering use")


def _require_sample_memory(system, args):
    """Refuse sample counts whose arrays cannot fit in memory, before any is drawn."""
    from .errors import require_memory
    P, K = system.n_plates, len(system.labels)
    per_member = {
        # draws (3P), the torque columns of every member and their scaled copies (3P x K)
        "monte_carlo": 8 * 3 * P * (3 * K + 4),
        # one row of results per draw, with Python's overhead
        "bootstrap": 8 * K + 120,
        "physics_samples": 8 * K + 120,
    }
    for opt, per in per_member.items():
        n = getattr(args, opt)
        if n:
            require_memory(n * per, f"--{opt.replace('_', '-')} {n:,}",
                           hint="ask for fewer samples")


def read_coefficients(path, hypothesis) -> dict:
    """Values of the free coefficients from a ``torque fit`` JSON, checked against a
    hypothesis: ``{label: value}``."""
    from .io import fit_values, read_fit
    doc = read_fit(path)
    values = fit_values(doc, hypothesis.free_labels, path)
    extra = sorted(set(doc["coefficients"]) - set(hypothesis.labels))
    if extra:
        raise InputError(f"the coefficients come from another hypothesis: not in "
                         f"{hypothesis.name!r}: {', '.join(extra)}", file=path,
                         hint="fit this hypothesis with torque fit first")
    return dict(zip(hypothesis.free_labels, values))


def _cmd_predict(args) -> int:
    from .balance import predict
    from .euler import Motions, net_rotation, write_motions
    from .io import output_suffix

    output_suffix(args.output, (".csv",))
    pb = _Problem(args.world, args.hypothesis, args.motions)
    s = pb.system
    c = s.fixed.copy()
    if s.free.any():
        if not args.coefficients:
            raise InputError(f"free coefficient(s) {', '.join(pb.hyp.free_labels)} need values",
                             file=args.hypothesis,
                             hint="pass --coefficients FIT.json from torque fit, or fix them "
                             "in the hypothesis")
        values = read_coefficients(args.coefficients, pb.hyp)
        for i, label in enumerate(s.labels):
            if s.free[i]:
                c[i] = values[label]
    omega = predict(s, c)
    motions = Motions(tuple(pb.world.plate_names), omega)
    write_motions(args.output, motions)
    w_net = net_rotation(pb.world, omega)
    print(f"predicted Euler vectors of {len(omega)} plates (mantle at rest); net rotation "
          f"{_pole_text(w_net)}")
    for note in pb.notes():
        print(f"note: {note}")
    print(f"wrote {args.output}")
    return EXIT_OK


def _cmd_rank(args) -> int:
    from .euler import read_motions
    from .io import output_suffix, write_csv
    from .rank import rank

    if args.output:
        output_suffix(args.output, (".csv",))
    if args.json:
        output_suffix(args.json, (".json",))
    world = _world(args.world)
    motions = read_motions(args.motions)
    omega = motions.for_world(world)
    from .balance import assemble
    from .forces import compute_torques
    from .hypothesis import load_hypothesis
    systems = []
    for h in args.hypotheses:
        hyp = load_hypothesis(h)
        systems.append(assemble(world, hyp, compute_torques(world, hyp, omega)))
    names = [s.name for s in systems]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        files = [h for h, n in zip(args.hypotheses, names) if n in dup]
        raise InputError(f"hypotheses share the name(s) {', '.join(map(repr, dup))} "
                         f"(files {', '.join(files)})", file=files[0],
                         hint="give each a different 'name'")
    rows, tests = rank(systems, omega, args.weighting)
    wn = max(10, *(len(r.name) for r in rows))
    print(f"{'rank':>4}  {'hypothesis':<{wn}} {'rms mm/yr':>9} {'VR %':>7} {'k':>2} "
          f"{'AIC':>10} {'BIC':>10} {'CV mm/yr':>9}")
    for i, r in enumerate(rows, 1):
        print(f"{i:4d}  {r.name:<{wn}} {r.rms_velocity_mm_yr:9.3f} "
              f"{100 * r.variance_reduction:7.2f} {r.free:2d} {r.aic:10.2f} {r.bic:10.2f} "
              f"{r.cv_rms_mm_yr:9.3f}")
    for t in tests:
        if t["p_value"] is not None:
            print(f"F-test {t['smaller']!r} within {t['bigger']!r}: F = {t['F']:.3g}, "
                  f"p = {t['p_value']:.3g}")
    print("sorted by AIC (lowest first); CV = leave-one-plate-out cross-validation error")
    # both outputs or neither: the CSV goes into place only once the JSON has
    from contextlib import ExitStack

    from .errors import atomic_path, atomic_write
    with ExitStack() as stack:
        if args.output:
            write_csv(stack.enter_context(atomic_path(args.output)), {
                "rank": np.arange(1, len(rows) + 1),
                "hypothesis": np.array([r.name for r in rows], dtype=object),
                "rms_velocity_mm_yr": np.array([r.rms_velocity_mm_yr for r in rows]),
                "variance_reduction": np.array([r.variance_reduction for r in rows]),
                "free_coefficients": np.array([r.free for r in rows]),
                "aic": np.array([r.aic for r in rows]),
                "aicc": np.array([r.aicc for r in rows]),
                "bic": np.array([r.bic for r in rows]),
                "cv_rms_mm_yr": np.array([r.cv_rms_mm_yr for r in rows])})
        if args.json:
            with atomic_write(args.json) as fh:
                fh.write(dumps({"rows": [r.__dict__ for r in rows], "f_tests": tests}))
    if args.output:
        print(f"wrote {args.output}")
    return EXIT_OK


# ----------------------------------------------------------------------------------------
# figures and the demo
# ----------------------------------------------------------------------------------------
def _map_kinds():
    from .maps import KINDS
    return KINDS


def _cmd_map(args) -> int:
    from .euler import read_motions
    from .io import output_suffix, read_fit
    from .maps import MapInputs

    output_suffix(args.output, (".png", ".svg", ".pdf"))
    kind = _map_kinds()[args.kind]
    given = {k for k in ("motions", "predicted", "fit", "hypothesis") if getattr(args, k)}
    missing = [k for k in kind.needs if k not in given]
    if missing:
        raise InputError(f"a {args.kind} map needs {', '.join('--' + m for m in missing)}")
    extra = sorted(given - set(kind.allows))
    if extra:
        raise InputError(f"{', '.join('--' + e for e in extra)} make(s) no sense for a "
                         f"{args.kind} map", hint=f"a {args.kind} map shows {kind.shows}")
    world = _world(args.world)
    cont = None
    if "continents" in world.paths:
        from .continents import read_continents
        cont = read_continents(world.paths["continents"], world.winding)
    hyp = None
    if args.hypothesis:
        from .hypothesis import load_hypothesis
        hyp = load_hypothesis(args.hypothesis)
    kind.draw(MapInputs(
        world, cont,
        read_motions(args.motions).for_world(world) if args.motions else None,
        read_motions(args.predicted).for_world(world) if args.predicted else None,
        read_fit(args.fit, world.plate_names) if args.fit else None, args.fit, hyp),
        args.output)
    print(f"wrote {args.output}")
    return EXIT_OK


def _cmd_demo(args) -> int:
    from .demo import run
    run(main, args.outdir, force=args.force)
    return EXIT_OK


# ----------------------------------------------------------------------------------------
def _arg_type(convert, noun, ok, rule):
    """An argparse type: ``convert`` the text, then require ``ok`` of the value."""
    def parse(text: str):
        try:
            value = convert(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r} is not {noun}") from None
        if not ok(value):
            raise argparse.ArgumentTypeError(f"{text} {rule}")
        return value
    return parse


# sample counts and seeds; grid steps and spacings
_count = _arg_type(int, "a whole number", lambda n: n >= 0, "is negative; give 0 or more")
_positive = _arg_type(float, "a number", lambda x: bool(np.isfinite(x) and x > 0),
                      "must be a finite number above 0")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="torque", description=(
        "Plate torques and Euler-pole prediction on a sphere. Results are model-dependent "
        "research estimates, not inputs to hazard or engineering decisions."))
    sub = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)

    p = sub.add_parser("check", help="validate a world and summarise its plates",
                       description="Read a world file, check that its plates tile the sphere "
                       "and that its rings and boundaries are sound, and summarise each plate. "
                       "Exit status 2 if any error is found.")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("--json", action="store_true", help="print the report as JSON")
    p.set_defaults(func=_cmd_check)

    p = sub.add_parser("frame", help="change the reference frame of a set of motions",
                       description="Express plate motions in the no-net-rotation frame (the "
                       "frame in which the surface integral of r x v vanishes, computed "
                       "exactly from the plates' drag tensors) or with one plate fixed. "
                       "Prints the net rotation before and after.")
    p.add_argument("motions", help="motions CSV (plate,lat,lon,rate)")
    p.add_argument("--world", required=True, help="world file (TOML)")
    p.add_argument("--to", required=True, metavar="FRAME", help="nnr, or plate:NAME")
    p.add_argument("-o", "--output", required=True, help="output motions CSV")
    p.set_defaults(func=_cmd_frame)

    p = sub.add_parser("field", help="velocity field on a grid or at points",
                       description="Velocity of the plate under each point, east and north "
                       "in mm/yr. Output by suffix: .csv, .geojson (points) or .nc "
                       "(NetCDF, CF-style; a lat x lon grid for --step).")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("motions", help="motions CSV (plate,lat,lon,rate)")
    g = p.add_mutually_exclusive_group()
    g.add_argument("--step", type=_positive, default=1.0, metavar="DEG",
                   help="cell-centred lon/lat grid step in degrees (default 1)")
    g.add_argument("--points", metavar="FILE", help="CSV of points with columns lon,lat")
    p.add_argument("-o", "--output", required=True, help="output file (.csv, .geojson, .nc)")
    p.set_defaults(func=_cmd_field)

    p = sub.add_parser("boundaries", help="relative motion along every boundary",
                       description="Sample every boundary and give the velocity of the right "
                       "plate relative to the left one: boundary-normal (opening positive), "
                       "along-strike, and obliquity (0 opening, 90 strike-slip, 180 closing).")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("motions", help="motions CSV (plate,lat,lon,rate)")
    p.add_argument("--spacing-km", type=_positive, default=50.0,
                   help="sample spacing along the lines, km (default 50)")
    p.add_argument("--classify", action="store_true",
                   help="give 'unclassified' lines a kind from their motion")
    p.add_argument("--geojson", metavar="FILE",
                   help="also write the (classified) boundaries as GeoJSON")
    p.add_argument("-o", "--output", required=True, help="output CSV")
    p.set_defaults(func=_cmd_boundaries)

    p = sub.add_parser("cooling", help="table of the lithosphere cooling model",
                       description="Sea-floor depth, surface heat flow, ridge push and slab "
                       "pull (per metre of trench, for the hypothesis' slab depth or 660 km) "
                       "against age, for the physics of a hypothesis file or the defaults.")
    p.add_argument("--physics", metavar="HYP.toml", help="hypothesis file whose [physics] "
                   "table to use")
    p.add_argument("--ages", metavar="A,B,...", help="ages in Myr (default 1 to 200)")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.add_argument("-o", "--output", help="also write the table as CSV")
    p.set_defaults(func=_cmd_cooling)

    p = sub.add_parser("torques", help="torque of each force term on each plate",
                       description="Torque about the planet's centre of every force term of "
                       "a hypothesis on every plate, at the term's fixed coefficient or at 1 "
                       "for a free one. Velocity-dependent terms (drag, resistance) need "
                       "--motions.")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("hypothesis", help="hypothesis file (TOML)")
    p.add_argument("--motions", help="motions CSV (plate,lat,lon,rate)")
    p.add_argument("-o", "--output", required=True, help="output CSV")
    p.set_defaults(func=_cmd_torques)

    weighting = dict(choices=("velocity", "area", "none"), default="velocity",
                     help="weighting of the plates' torque equations in the torque-space fit "
                     "(default velocity: by the inverse square root of each plate's drag "
                     "tensor)")
    p = sub.add_parser("fit", help="estimate the free coefficients from observed motions",
                       description="Fit the free coefficients of a hypothesis to observed "
                       "Euler vectors (mantle at rest, e.g. no-net-rotation), in torque space "
                       "(linear) and in velocity space (preferred), with per-plate "
                       "diagnostics and optional resampling.")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("hypothesis", help="hypothesis file (TOML)")
    p.add_argument("motions", help="observed motions CSV")
    p.add_argument("-o", "--output", required=True, help="output JSON")
    p.add_argument("--weighting", **weighting)
    p.add_argument("--bootstrap", type=_count, default=0, metavar="N",
                   help="refit on N resamples of the plates")
    p.add_argument("--monte-carlo", type=_count, default=0, metavar="N",
                   help="refit on N draws of the motions from their covariance columns")
    p.add_argument("--physics-samples", type=_count, default=0, metavar="N",
                   help="refit on N draws of the physics from the hypothesis' [spread] table")
    p.add_argument("--seed", type=_count, default=0, help="random seed (default 0)")
    p.set_defaults(func=_cmd_fit)

    p = sub.add_parser("predict", help="Euler vectors that balance the torques",
                       description="Forward model: the Euler vector of every plate that "
                       "balances the torques of a hypothesis, in the frame where the mantle "
                       "is at rest. Free coefficients take their values from --coefficients.")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("hypothesis", help="hypothesis file (TOML)")
    p.add_argument("--coefficients", metavar="FIT.json", help="output of torque fit")
    p.add_argument("--motions", help="motions CSV, only to synthesise sea-floor ages when "
                   "the world has no age grid")
    p.add_argument("-o", "--output", required=True, help="output motions CSV")
    p.set_defaults(func=_cmd_predict)

    p = sub.add_parser("rank", help="compare hypotheses",
                       description="Fit every hypothesis to the same motions and tabulate "
                       "misfit, free coefficients, AIC, AICc, BIC and leave-one-plate-out "
                       "cross-validation error, best (lowest AIC) first; F-tests for nested "
                       "pairs.")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("motions", help="observed motions CSV")
    p.add_argument("hypotheses", nargs="+", metavar="HYP", help="hypothesis files")
    p.add_argument("-o", "--output", help="output CSV")
    p.add_argument("--json", metavar="FILE", help="also write rows and F-tests as JSON")
    p.add_argument("--weighting", **weighting)
    p.set_defaults(func=_cmd_rank)

    p = sub.add_parser("map", help="maps and charts",
                       description="Draw a map or chart (PNG, SVG or PDF). Kinds: "
                       + "; ".join(f"{k}: {v.shows}" for k, v in _map_kinds().items()) + ".")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("--kind", required=True, choices=list(_map_kinds()))
    p.add_argument("--motions", help="observed motions CSV")
    p.add_argument("--predicted", help="predicted motions CSV (from torque predict)")
    p.add_argument("--fit", help="output of torque fit")
    p.add_argument("--hypothesis", help="hypothesis file (TOML)")
    p.add_argument("-o", "--output", required=True, help="output file (.png, .svg, .pdf)")
    p.set_defaults(func=_cmd_map)

    p = sub.add_parser("demo", help="the whole job on the bundled demo planet",
                       description="Run check, cooling, torques, fits of every hypothesis, "
                       "ranking, prediction, velocity field, boundary motion, maps and the "
                       "report on the bundled invented planet (synthetic data), into OUTDIR.")
    p.add_argument("outdir", nargs="?", default="torque-demo",
                   help="output folder (default torque-demo); must be empty")
    p.add_argument("--force", action="store_true",
                   help="write into a folder that holds other files (never deletes any)")
    p.set_defaults(func=_cmd_demo)
    return parser


EXIT_BROKEN_PIPE = 141     # 128 + SIGPIPE, what a shell reports for a reader that went away


def _terminate(signum, frame):
    # Raising unwinds the stack, so atomic writers remove their temporary files.
    raise SystemExit(128 + signum)


def main(argv=None) -> int:
    """Run the ``torque`` command; returns the exit status.

    0 on success; 2 on bad input or usage, with one message on stderr naming the file and
    what is wrong; 141 (quietly) when the reader of standard output goes away
    (``torque cooling --json | head``). SIGTERM removes partly written outputs.
    """
    import signal
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        previous = signal.signal(signal.SIGTERM, _terminate)
    except ValueError:          # not the main thread: leave the handler alone
        previous = None
    try:
        return args.func(args)
    except InputError as exc:
        print(f"torque {args.command}: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except BrokenPipeError:
        _silence_stdout()
        return EXIT_BROKEN_PIPE
    except MemoryError:
        print(f"torque {args.command}: not enough memory for this work; use a coarser grid "
              "step or fewer samples", file=sys.stderr)
        return EXIT_BAD_INPUT
    except OSError as exc:
        # a file that cannot be read or written (permissions, a full disk, ...)
        where = exc.filename or "a file"
        print(f"torque {args.command}: {where}: {exc.strerror or exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    finally:
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)


def _silence_stdout():
    """Point stdout at /dev/null so that the interpreter's final flush does not fail."""
    import os
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
