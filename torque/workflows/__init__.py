"""The recipes every caller uses: the command line, the demo, notebooks and scripts.

Each recipe takes what a researcher names (a world's inputs, a hypothesis, observed
motions, a fit) and one :class:`FitOptions`, and returns a typed result
(:mod:`torque.results`). The rules that tie options together live here and nowhere else:
the chi-square needs a covariance, a model error goes with the chi-square, a mantle
rotation is fitted or given but not both. A fit's mantle frame travels with its
:class:`~torque.results.FitResult`: every recipe that takes a fit (torques, prediction,
maps) puts observed motions into that frame first (:func:`in_fit_frame`), so that a
plate held fixed in a motions file is not taken to be fixed over the mantle.

Files are read and written by :mod:`torque.io`; what the recipes read (hypotheses,
motions, covariance files) they read through it.

Modules
-------
options      :class:`FitOptions`: misfit, covariance, frame, seed, resampling
cases        inputs read once per process (:func:`load_inputs`), a hypothesis on a world
             (:class:`Case`), the covariances the options ask for
fitting      :func:`fit`, :func:`rank`, and at a fit: :func:`torque_table`,
             :func:`predict_motions`, :func:`in_fit_frame`, :func:`fit_coefficients`
figures      :func:`map_inputs`: what a map kind draws, in one frame
series       :func:`run_series`: a stage series on an executor
kinematics   :func:`check`, :func:`cooling`, :func:`change_frame`, :func:`velocity_field`,
             :func:`net_rotation_on`,
             :func:`boundary_motion`
plausibility :func:`input_warnings`, :func:`coefficient_warnings`: sizes that say a unit
             is wrong

The names of the modules are importable from here, on first use (PEP 562).

Examples
--------
>>> from torque import workflows
>>> inputs = workflows.load_inputs("polygons_demo/world.toml")
>>> run = workflows.fit(inputs, "polygons_demo/hypotheses/continental_drag.toml",
...                     "polygons_demo/motions.csv", workflows.FitOptions(profile=False))
>>> round(run.result.coefficients["slab"].value, 3)
0.05
"""

from .._lazy import lazy_exports

_EXPORTS = {
    "MISFITS": "options",
    "RESAMPLE_FITS": "options",
    "FitOptions": "options",
    "load_inputs": "cases",
    "forget_inputs": "cases",
    "as_motions": "cases",
    "as_hypothesis": "cases",
    "as_fit": "cases",
    "Case": "cases",
    "build_case": "cases",
    "Covariances": "cases",
    "covariances": "cases",
    "CIRCULAR": "fitting",
    "FitRun": "fitting",
    "fit": "fitting",
    "fit_coefficients": "fitting",
    "in_fit_frame": "fitting",
    "torque_table": "fitting",
    "predict_motions": "fitting",
    "rank": "fitting",
    "map_inputs": "figures",
    "input_warnings": "plausibility",
    "coefficient_warnings": "plausibility",
    "run_series": "series",
    "DEFAULT_COOLING_AGES": "kinematics",
    "MIN_RUN_KM": "kinematics",
    "TRANSFORM_WITHIN_DEG": "kinematics",
    "check": "kinematics",
    "cooling": "kinematics",
    "net_rotation_on": "kinematics",
    "change_frame": "kinematics",
    "velocity_field": "kinematics",
    "BoundaryMotion": "kinematics",
    "boundary_motion": "kinematics",
}

__getattr__, __dir__ = lazy_exports(__name__, globals(), _EXPORTS)
__all__ = sorted(_EXPORTS)
