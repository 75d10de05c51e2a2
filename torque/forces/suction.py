"""Trench suction: a line force on the overriding plate at the trench, toward the trench.

Its magnitude per metre is the coefficient times ``force_per_length`` if given, else the
negative buoyancy of the slab below (computed as for :mod:`torque.forces.slab`, with the
same age and depth rules), so that the coefficient is the fraction of the slab's buoyancy
felt as suction by the overriding plate.
"""

from __future__ import annotations

import numpy as np

from .base import ForceTerm, empty_term
from .slab import KEYS as SLAB_KEYS
from .slab import POSITIVE, slab_buoyancy, trench_geometry  # noqa: F401

KIND = "suction"
UNIT = "dimensionless"
KEYS = dict(SLAB_KEYS)


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
    F, notes = slab_buoyancy(ctx, spec, pcs, sub_left, sinking)
    # toward the sinking plate: +n if it is on the left
    sign = np.where(sub_left, 1.0, -1.0)
    term = empty_term(ctx, spec, UNIT, notes)
    term.driving[:] = ctx.line_force_torque(pcs, F, sign, overriding)
    return term
