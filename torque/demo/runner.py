"""``torque demo``: the whole job on the bundled demo planet, and its report.

The runner calls the command line itself, in-process, so that it exercises exactly what
users run; ``main`` is passed in (no import of :mod:`torque.cli`, which imports this
module). The demo world's inputs are read and checked once
(:func:`torque.workflows.load_inputs` keeps them for every step of the process).
"""

from __future__ import annotations

import contextlib
import io
import time
from pathlib import Path

from .. import progress
from ..errors import InputError
from ..io import atomic_write, read_fit
from ..io.files import output_folder, read_json
from ..io.manifest import run_manifest
from ..parallel import small_solves
from ..present.report import write_html, write_markdown
from ..present import maps
from ..workflows import load_inputs, map_inputs
from .planet import BUNDLED, TRUTH_HYPOTHESIS, write

__all__ = ["SEED", "GLS_SUFFIX", "OUTPUTS", "run", "WHAT_IS_WHERE", "draw_maps"]

#: The seed of every resampling the demo runs.
SEED = 1
#: The name of the demo's extra fit of the true hypothesis (chi-square, free frame).
GLS_SUFFIX = "_chi_square_free_frame"
OUTPUTS = ("check.json", "cooling.csv", "torques.csv", "fits", "rank.csv", "rank.json",
           "predicted.csv", "field.nc", "boundary_motion.csv", "maps", "report.html",
           "report.md")


def run(main, outdir, force: bool = False, echo=print) -> dict:
    """Run the whole job on the demo world; write everything into ``outdir``.

    Parameters
    ----------
    main : callable
        The command line's entry point (``torque.cli.main``), passed in so that the demo
        runs exactly what users run without importing the command line (no cycle). It is
        called as ``main(argv)``.
    outdir : str or Path
        Must be empty (or missing) unless ``force``; even then only the files this run
        writes are replaced, and nothing is deleted.
    force : bool
    echo : callable
        Where the summary lines go.

    Returns
    -------
    dict
        ``outdir``, the ``best`` hypothesis' name and the run time in ``seconds``.
    """
    outdir = output_folder(outdir, "demo", force)
    # the demo's world is small: every matrix product and solve in it is, where BLAS threads
    # cost more CPU than they save (a second of the demo's 6 s on two cores)
    with small_solves():
        return _run(main, outdir, echo)


def _run(main, outdir, echo) -> dict:
    """:func:`run` after its output folder is made."""
    t0 = time.perf_counter()
    started = time.time()
    commands = []
    src = BUNDLED
    if not (src / "world.toml").is_file():
        src = outdir / "world"
        echo(f"generating the demo world in {src}")
        write(src)
    world = src / "world.toml"
    motions = src / "motions.csv"
    hyps = sorted((src / "hypotheses").glob("*.toml"))
    truth = read_json(src / "truth.json")
    with progress.task("demo: reading and checking the world"):
        inputs = load_inputs(world)    # read and checked once, for every step

    def step(*argv):
        buf = io.StringIO()
        commands.append([str(a) for a in argv])
        what = f"{argv[0]} {Path(argv[2]).stem}" if argv[0] == "fit" else argv[0]
        with progress.task(f"demo: torque {what}"), contextlib.redirect_stdout(buf):
            status = main([str(a) for a in argv])
        if status != 0:
            raise InputError(f"demo step 'torque {argv[0]}' failed (status {status})")
        return buf.getvalue()

    (outdir / "fits").mkdir(exist_ok=True)
    (outdir / "maps").mkdir(exist_ok=True)
    with atomic_write(outdir / "check.json") as fh:
        fh.write(step("check", world, "--json"))
    step("cooling", "-o", outdir / "cooling.csv")
    for h in hyps:
        extra = (["--bootstrap", "200", "--monte-carlo", "1000", "--seed", str(SEED)]
                 if h.stem == TRUTH_HYPOTHESIS else [])
        step("fit", world, h, motions, "-o", outdir / "fits" / f"{h.stem}.json", *extra)
    # the true hypothesis again, as a referee would ask: the chi-square with the motions'
    # covariance, and the mantle's rotation fitted rather than assumed
    gls = outdir / "fits" / f"{TRUTH_HYPOTHESIS}{GLS_SUFFIX}.json"
    step("fit", world, src / "hypotheses" / f"{TRUTH_HYPOTHESIS}.toml", motions, "-o", gls,
         "--misfit", "chi-square", "--free-frame", "--bootstrap", "200", "--seed", str(SEED))
    step("rank", world, motions, *hyps, "-o", outdir / "rank.csv", "--json",
         outdir / "rank.json")
    ranking = read_json(outdir / "rank.json")
    rows = ranking["rows"]
    fits = {h.stem: read_fit(outdir / "fits" / f"{h.stem}.json") for h in hyps}
    gls_fit = read_fit(gls)
    by_name = {f.hypothesis: stem for stem, f in fits.items()}
    # the hypothesis rank recommends (its rule says why), the one the maps show
    chosen = next(r for r in rows if r["name"] == ranking["recommended"])
    best = by_name[chosen["name"]]
    best_hyp = src / "hypotheses" / f"{best}.toml"
    step("torques", world, best_hyp, "--motions", motions, "--fit",
         outdir / "fits" / f"{best}.json", "-o", outdir / "torques.csv")
    step("predict", world, best_hyp, "--fit", outdir / "fits" / f"{best}.json",
         "-o", outdir / "predicted.csv")
    step("field", world, motions, "--step", "1", "-o", outdir / "field.nc")
    step("boundaries", world, motions, "-o", outdir / "boundary_motion.csv")
    with progress.task("demo: maps and charts"):
        figures = draw_maps(outdir, inputs, motions, outdir / "predicted.csv", best_hyp,
                            outdir / "fits" / f"{best}.json")

    summary = _summary(fits[best], chosen, truth)
    by_hypothesis = {f.hypothesis: f for f in fits.values()}
    run_info = {"world": "Orrery (synthetic demo)", "summary": summary, "truth": truth,
                "rank": rows, "rank_reason": ranking.get("reason"),
                "fits": {r["name"]: by_hypothesis[r["name"]] for r in rows},
                "other_fits": {f"{gls_fit.hypothesis}: chi-square with the motions' "
                               "covariance, mantle frame fitted": gls_fit},
                "figures": figures,
                "check_problems": [f"{p['severity']}: {p['message']}" for p in
                                   read_json(outdir / "check.json").get("problems", [])],
                "manifest": run_manifest(
                    commands, [world, *inputs.world.paths.values(), motions, *hyps,
                               src / "truth.json"],
                    {"bootstrap and Monte Carlo draws": SEED}, started)}
    with progress.task("demo: report"):
        write_markdown(outdir / "report.md", run_info)
        write_html(outdir / "report.html", run_info, outdir)
    elapsed = time.perf_counter() - t0
    echo(f"torque demo: the whole job on the invented planet Orrery ({elapsed:.0f} s)")
    for line in summary[1:]:
        echo(f"  {line}")
    echo(f"  world and data:   {src}")
    for name, what in WHAT_IS_WHERE:
        echo(f"  {what + ':':<34}{outdir / name}")
    echo("  caution: synthetic data; results of this tool are model-dependent research "
         "estimates, not for hazard or engineering use")
    return {"outdir": str(outdir), "best": rows[0]["name"], "seconds": elapsed}


#: What the demo writes where, for its closing lines.
WHAT_IS_WHERE = (
    ("check.json", "world check"), ("cooling.csv", "cooling table"),
    ("torques.csv", "torques (recommended, fitted)"), ("fits/", "fits of every hypothesis"),
    ("rank.csv", "ranking"), ("predicted.csv", "predicted Euler vectors"),
    ("field.nc", "velocity field"), ("boundary_motion.csv", "relative motion along boundaries"),
    ("maps/", "maps and charts"), ("report.html", "report (one file)"),
    ("report.md", "report summary"))


def _summary(fit, row, truth) -> list:
    """The report's and the terminal's summary lines: the recommended hypothesis' fit
    against the truth."""
    return [
        f"{len(fit.plates)} plates on the invented planet Orrery; every number here comes "
        "from synthetic data made by the forward model (truth.json).",
        f"recommended hypothesis: {row['name']} (RMS velocity misfit "
        f"{row['rms_velocity_mm_yr']:.2f} mm/yr, variance reduction "
        f"{100 * row['variance_reduction']:.2f} %).",
        "true coefficients: " + ", ".join(f"{k} {v:g}" for k, v in
                                          truth["true_coefficients"].items()) + ".",
        "fitted: " + ", ".join(f"{k} {c.value:.4g} ± {c.stderr:.2g}"
                               for k, c in fit.coefficients.items() if c.free) + ".",
    ]


def draw_maps(outdir, inputs, motions_path, predicted_path, hyp_path, fit_path) -> list:
    """Every map and chart of the demo.

    Parameters
    ----------
    outdir : Path
        The figures go into ``outdir / "maps"``.
    inputs : Inputs
        The demo world and its data.
    motions_path, predicted_path, hyp_path, fit_path : Path
        Observed and predicted motions, the best hypothesis and its fit.

    Returns
    -------
    list of (str, str)
        Title and path relative to ``outdir`` of every figure.
    """
    m = Path(outdir) / "maps"
    figs = []
    for title, kind, name, given in (
            ("Plates and boundaries", "plates", "plates", {}),
            ("Velocities, observed and predicted", "velocities", "velocities",
             {"motions": motions_path, "predicted": predicted_path, "fit": fit_path}),
            ("Euler poles with 95 % ellipses", "poles", "poles", {"fit": fit_path}),
            ("Velocity misfit", "misfit", "misfit", {"fit": fit_path}),
            ("Force budget", "budget", "budget", {"fit": fit_path}),
            ("Torques", "torques", "torques",
             {"motions": motions_path, "fit": fit_path, "hypothesis": hyp_path}),
            ("Torques on the globe", "torque-globe", "torque_globe",
             {"motions": motions_path, "fit": fit_path, "hypothesis": hyp_path})):
        figs.append((title, maps.KINDS[kind].draw(map_inputs(inputs, kind, **given),
                                                  m / f"{name}.png")))
    return [(t, str(Path(p).relative_to(outdir))) for t, p in figs]
