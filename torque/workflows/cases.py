"""Inputs read once per process, a hypothesis on a world (:class:`Case`), and the
covariances a fit's options ask for.
"""

from __future__ import annotations

import dataclasses
import os
from pathlib import Path
import numpy as np
from ..errors import InputError
from .options import FitOptions

__all__ = ["load_inputs", "forget_inputs", "as_motions", "as_hypothesis", "as_fit",
           "Case", "build_case", "Covariances", "covariances"]


# ----------------------------------------------------------------------------------------
# inputs, read once per process
# ----------------------------------------------------------------------------------------
_INPUTS: dict = {}


def _stamp(paths) -> tuple:
    """What says a file set is unchanged: each file's size and modification time."""
    out = []
    for p in paths:
        try:
            st = os.stat(p)
            out.append((str(p), st.st_size, st.st_mtime_ns))
        except OSError:
            out.append((str(p), None, None))
    return tuple(out)


def load_inputs(path, *, valid: bool = True):
    """A world and its data (:class:`torque.io.Inputs`), read and checked once per process.

    A second call for the same world file returns the same object while none of its files
    changed (size and modification time), so that a session or the demo running many
    commands reads, checks and locates the world once.

    Parameters
    ----------
    path : str or Path
        The world file.
    valid : bool
        Refuse a world with errors (:func:`torque.validate.require_valid`).

    Returns
    -------
    Inputs
    """
    from .. import progress
    from ..io import Inputs
    path = Path(path)
    key = (str(path.resolve()), valid)
    hit = _INPUTS.get(key)
    if hit is not None:
        inputs, stamp = hit
        if _stamp(_input_files(inputs)) == stamp:
            return inputs
    with progress.task(f"reading and checking {path.name}"):
        inputs = Inputs.load(path, valid=valid)
    _INPUTS.clear()                        # one world at a time: its grids can be large
    _INPUTS[key] = (inputs, _stamp(_input_files(inputs)))
    return inputs


def forget_inputs() -> None:
    """Drop the inputs :func:`load_inputs` keeps, so that the next call reads them again."""
    _INPUTS.clear()


def _input_files(inputs) -> list:
    return [inputs.path, *(p for p in inputs.world.paths.values() if p is not None)]


def as_motions(motions):
    """A Motions from a Motions or a motions file (None stays None).

    Parameters
    ----------
    motions : Motions or str or Path or None

    Returns
    -------
    Motions or None
    """
    if motions is None or hasattr(motions, "for_world"):
        return motions
    from ..io import read_motions
    return read_motions(motions)


def as_hypothesis(hypothesis):
    """A Hypothesis from a Hypothesis or a hypothesis file.

    Parameters
    ----------
    hypothesis : Hypothesis or str or Path

    Returns
    -------
    Hypothesis
    """
    if hasattr(hypothesis, "forces"):
        return hypothesis
    from ..io import load_hypothesis
    return load_hypothesis(hypothesis)


def as_fit(fit, world):
    """A FitResult from a FitResult or a fit file of ``world``'s plates (None stays None).

    Parameters
    ----------
    fit : FitResult or str or Path or None
    world : World

    Returns
    -------
    fit : FitResult or None
    file : str or None
        The fit's file, named in messages.
    """
    if fit is None or hasattr(fit, "coefficients"):
        return fit, None
    from ..io import read_fit
    return read_fit(fit, world.plate_names), str(fit)


# ----------------------------------------------------------------------------------------
# a hypothesis on a world
# ----------------------------------------------------------------------------------------
@dataclasses.dataclass(frozen=True, eq=False)
class Case:
    """One case: a hypothesis on a world's inputs, with observed motions if any, and its
    balance (not to be confused with :class:`torque.world.Problem`, a problem found in an
    input file).

    Attributes
    ----------
    inputs : Inputs
    hypothesis : Hypothesis
    motions : Motions or None
    omega : ndarray, shape (P, 3), or None
        The motions in world plate order (rad/s), as given (in their own frame).
    terms : list of ForceTerm
    system : System
    """

    inputs: object
    hypothesis: object
    motions: object
    omega: object
    terms: list
    system: object

    def __repr__(self) -> str:
        return (f"Case({self.system!r}, motions "
                f"{'given' if self.omega is not None else 'none'})")

    def rebuild(self, physics):
        """The balance for other physics (a Monte Carlo draw); the world's data, located
        and clipped once, are shared.

        Parameters
        ----------
        physics : Physics

        Returns
        -------
        System
        """
        from ..forces import build_terms
        from ..inference.system import assemble
        hyp = dataclasses.replace(self.hypothesis, physics=physics)
        return assemble(self.inputs.world, hyp,
                        build_terms(self.inputs.context(hyp, self.omega)))

    def notes(self) -> list:
        """The notes of every term, in order."""
        return [n for t in self.terms for n in t.notes]


def build_case(inputs, hypothesis, motions=None) -> Case:
    """Build every term of ``hypothesis`` on ``inputs``.

    Parameters
    ----------
    inputs : Inputs
    hypothesis : Hypothesis or str or Path
    motions : Motions or str or Path, optional
        Observed motions (the terms that depend on the motions, and synthesised ages, use
        them).

    Returns
    -------
    Case
    """
    from ..forces import build_terms
    from ..inference.system import assemble
    hyp = as_hypothesis(hypothesis)
    motions = as_motions(motions)
    omega = motions.for_world(inputs.world) if motions is not None else None
    terms = build_terms(inputs.context(hyp, omega))
    return Case(inputs, hyp, motions, omega, terms, assemble(inputs.world, hyp, terms))


# ----------------------------------------------------------------------------------------
# covariances
# ----------------------------------------------------------------------------------------
@dataclasses.dataclass(frozen=True, eq=False)
class Covariances:
    """The covariances a fit uses, in world plate order, (rad/s)^2.

    Attributes
    ----------
    data : ndarray, shape (P, 3, 3) or (3P, 3P), or None
        Of the observations: the motions' ``cov_*`` columns, or a covariance file.
    model : ndarray, shape (P, 3, 3), or None
        The model error.
    fit : ndarray or None
        What the chi-square uses (``data`` plus ``model``); None for the area misfit.
    notes : list of str
        Where they came from, for the fit's notes.
    """

    data: object
    model: object
    fit: object
    notes: list

    def __repr__(self) -> str:
        shape = "none" if self.data is None else "x".join(map(str, np.shape(self.data)))
        return f"Covariances(data {shape}, model error {self.model is not None})"


def covariances(options: FitOptions, motions, world, system) -> Covariances:
    """The covariances that ``options`` ask for, checked.

    Parameters
    ----------
    options : FitOptions
    motions : Motions
    world : World
    system : System
        Any hypothesis' balance on ``world`` (the model error needs its drag tensors).

    Returns
    -------
    Covariances

    Raises
    ------
    InputError
        For a chi-square misfit with no covariance at all.
    """
    from ..inference.covariance import add_covariances, model_error_covariance
    from ..io import read_covariance
    notes = []
    if options.covariance:
        data = read_covariance(options.covariance, world.plate_names)
        notes.append(f"covariance: the full covariance of {options.covariance} (correlations "
                     "between plates included)"
                     + ("; the motions' cov_* columns were not used" if motions.cov is not None
                        else ""))
    else:
        data = motions.cov_for_world(world)
    if options.misfit != "chi-square":
        return Covariances(data, None, None, notes)
    model = None
    if options.model_error_mm_yr:
        model = model_error_covariance(system, options.model_error_mm_yr)
        notes.append(f"model error: {options.model_error_mm_yr:g} mm/yr RMS velocity on each "
                     "plate added to the observations' covariance")
    if data is None and model is None:
        raise InputError("a chi-square misfit needs a covariance: the motions have no cov_xx "
                         "... cov_zz columns", file=motions.source,
                         hint="add them in (deg/Myr)^2, give --covariance FILE or "
                         "--model-error MM_YR, or leave out --misfit chi-square")
    total = data if model is None else add_covariances(data, model)
    return Covariances(data, model, total, notes)
