"""What a map kind draws from, read, checked and put in one frame (:func:`map_inputs`).
"""

from __future__ import annotations

import numpy as np
from ..errors import InputError
from .cases import as_fit, as_hypothesis, as_motions
from .fitting import torque_table

__all__ = ["map_inputs"]


# ----------------------------------------------------------------------------------------
# maps
# ----------------------------------------------------------------------------------------
def map_inputs(inputs, kind, motions=None, predicted=None, fit=None, hypothesis=None,
               frame: str = "mantle"):
    """What a map kind draws from, read, checked and put in one frame.

    Parameters
    ----------
    inputs : Inputs
    kind : str
        A key of :data:`torque.present.maps.KINDS`.
    motions, predicted : Motions or str or Path, optional
        Observed motions (in their own frame) and predicted ones (in the mantle's frame,
        as ``torque predict`` writes them).
    fit : FitResult or str or Path, optional
    hypothesis : Hypothesis or str or Path, optional
    frame : {"mantle", "motions"}
        Where the map's motions are drawn: the fit's mantle frame (default), or the frame
        of the observed motions (predicted motions then carry the fit's mantle rotation).

    Returns
    -------
    MapInputs
    """
    from ..present.maps import KINDS, MapInputs
    if kind not in KINDS:
        raise InputError(f"no map kind {kind!r}", hint=f"kinds are {', '.join(KINDS)}")
    if frame not in ("mantle", "motions"):
        raise InputError(f"frame must be 'mantle' or 'motions', got {frame!r}")
    spec = KINDS[kind]
    given = {k for k, v in (("motions", motions), ("predicted", predicted), ("fit", fit),
                            ("hypothesis", hypothesis)) if v is not None}
    missing = [k for k in spec.needs if k not in given]
    if missing:
        raise InputError(f"a {kind} map needs {', '.join('--' + m for m in missing)}")
    extra = sorted(given - set(spec.allows))
    if extra:
        raise InputError(f"{', '.join('--' + e for e in extra)} make(s) no sense for a "
                         f"{kind} map", hint=f"a {kind} map shows {spec.shows}")
    world = inputs.world
    fit, fit_file = as_fit(fit, world)
    observed = as_motions(motions)
    observed = None if observed is None else observed.for_world(world)
    pred = as_motions(predicted)
    pred = None if pred is None else pred.for_world(world)
    w = np.zeros(3) if fit is None else fit.mantle_rotation_rad_s
    if observed is not None and frame == "mantle":
        observed = observed - w
    if pred is not None and frame == "motions":
        pred = pred + w
    table = None
    if hypothesis is not None and fit is not None and motions is not None:
        table, _ = torque_table(inputs, hypothesis, motions, fit)
    return MapInputs(inputs, observed, pred, fit, fit_file,
                     as_hypothesis(hypothesis) if hypothesis is not None else None,
                     torques=table, frame=frame)
