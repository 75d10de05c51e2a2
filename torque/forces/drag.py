"""Basal drag over a mantle at rest: traction ``-C v`` on the base of the plate.

For a plate turning at ``omega`` the torque is ``-C R^4 D omega`` with ``D = int (I - r r^T)
dA`` over the region on the unit sphere, exact for the whole plate and for its oceanic or
continental part (continents clipped to plates exactly, :mod:`torque.continents`).
The coefficient C is in Pa s/m (for a channel of thickness h and viscosity eta, C = eta/h).
"""

from __future__ import annotations

import numpy as np

from .base import ForceTerm, empty_term

KIND = "drag"
UNIT = "Pa s/m"
KEYS = {"region": '"all" (default), "ocean" or "continent"'}
CHOICES = {"region": ("all", "ocean", "continent")}
DEFAULTS = {"region": "all"}


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
    return f"{KIND}_{options.get('region', 'all')}"


def resisting_blocks(ctx, region) -> np.ndarray:
    """``-R^4 D`` on the diagonal blocks, shape (P, 3, P, 3).

    Parameters
    ----------
    ctx : Context
    region : {"all", "ocean", "continent"}

    Returns
    -------
    ndarray, shape (P, 3, P, 3)
    """
    D = ctx.drag_tensor(region)
    P = D.shape[0]
    out = np.zeros((P, 3, P, 3))
    out[np.arange(P), :, np.arange(P), :] = -ctx.R ** 4 * D
    return out


def region_notes(ctx, spec) -> list:
    """What the user should know about the continent clipping behind a regional term.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
        The force entry, its options' defaults filled in.

    Returns
    -------
    list of str
    """
    if spec.options["region"] == "all":
        return []
    return [f"{spec.label}: {w}" for w in ctx.clip_warnings]


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
    blocks = resisting_blocks(ctx, spec.options["region"])
    term = empty_term(ctx, spec, UNIT, region_notes(ctx, spec))
    term.resisting[:] = blocks
    return term
