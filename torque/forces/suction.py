"""Trench suction: a line force on the overriding plate at the trench, toward the trench.

What is modelled is trench suction as global torque-balance studies model it (Chapple and
Tullis 1977; Turcotte and Schubert 2014, the driving forces of plate tectonics): a force per
metre of trench pulling the overriding plate toward the trench, normal to it, constant
along pieces of at most 50 km. Two forms (``form``):

* ``"fraction"`` (default): per metre, the coefficient (dimensionless) times
  ``force_per_length`` if given, else the negative buoyancy of the slab below (computed as
  for :mod:`torque.forces.slab`, with the same age and depth rules): suction as a share of
  the slab's pull;
* ``"per-length"``: the coefficient itself is the suction in N/m, the same along every
  trench, independent of the slab (its own free coefficient in a fit).

Not modelled: suction as tractions of slab-driven mantle flow on the bases of both plates
(give such a flow to the ``mantle`` kind instead).

References
----------
.. [1] Chapple, W. M. and Tullis, T. E. (1977). Evaluation of the forces that drive the
   plates. *J. Geophys. Res.* 82, 1967-1984 (page numbers from memory).
.. [2] Turcotte, D. L. and Schubert, G. (2014). *Geodynamics*, 3rd ed. Cambridge University
   Press, ch. 6 (the driving forces of plate tectonics; chapter from memory).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from .base import ForceTerm, empty_term
from .slab import BUOYANCY_CHOICES as SLAB_CHOICES
from .slab import BUOYANCY_KEYS as SLAB_KEYS
from .slab import POSITIVE, slab_buoyancy, trench_geometry  # noqa: F401

__all__ = ["KIND", "UNIT", "PER_LENGTH_UNIT", "KEYS", "CHOICES", "DEFAULTS",
           "default_label", "build"]

KIND = "suction"
UNIT = "dimensionless"
#: The coefficient's unit in the per-length form.
PER_LENGTH_UNIT = "N/m"
KEYS = {**SLAB_KEYS,
        "form": '"fraction" (default: the coefficient is a fraction of the slab\'s negative '
                'buoyancy) or "per-length" (the coefficient is the suction in N/m)'}
CHOICES = {"form": ("fraction", "per-length"), **SLAB_CHOICES}
DEFAULTS = {"form": "fraction"}


def default_label(options) -> str:
    """The term's label when the entry gives none (the kind protocol, see :mod:`torque.forces`).

    Parameters
    ----------
    options : dict
        The entry's options.

    Returns
    -------
    str
    """
    return KIND


def build(ctx, spec) -> ForceTerm:
    """The :class:`~torque.forces.base.ForceTerm` of one force entry of this kind.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
        The force entry, its options' defaults filled in.

    Returns
    -------
    ForceTerm
    """
    pcs, sub_left, sinking, overriding = trench_geometry(ctx, spec.label)
    if spec.options["form"] == "per-length":
        slab_keys = sorted(set(spec.options) & set(SLAB_KEYS))
        if slab_keys:
            raise InputError(f"{spec.label}: {', '.join(map(repr, slab_keys))} describe the "
                             "slab, which the per-length form does not use",
                             file=ctx.hypothesis.source,
                             hint='drop them, or use form = "fraction"')
        F, notes, unit = np.ones(len(pcs.theta)), [], PER_LENGTH_UNIT
    else:
        (F, notes), unit = slab_buoyancy(ctx, spec, pcs, sub_left, sinking), UNIT
    # toward the sinking plate: +n if it is on the left
    sign = np.where(sub_left, 1.0, -1.0)
    term = empty_term(ctx, spec, unit, notes)
    term.driving[:] = ctx.line_force_torque(pcs, F, sign, overriding)
    return term
