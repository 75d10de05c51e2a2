"""Resistance at plate boundaries proportional to the relative velocity: the kinds
``transform``, ``subduction_resistance`` and ``collision``, one per boundary kind
(``trench``, the old name of ``subduction_resistance``, is still read, with a note).

On a boundary between plates P (left) and Q (right) the force per unit length on P is
``-c (v_P - v_Q)``, or only its along-strike or boundary-normal part (``component``). Its
torque on P, on the unit sphere with ``Delta = omega_P - omega_Q``, is
``-c R^3 K Delta`` with, for each great-circle arc of length theta and pole n:
``K = theta I - int r r^T ds`` (all), ``theta n n^T`` (along strike: ``r x t = n`` is
constant along the arc), or their difference (normal). All exact. The coefficient c is in
Pa s (N per metre of boundary per m/s).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import sphere
from .base import ForceTerm, empty_term

UNIT = "Pa s"
KEYS = {"component": '"all" (default), "strike" or "normal": which part of the relative '
                     'velocity is resisted'}
CHOICES = {"component": ("all", "strike", "normal")}
DEFAULTS = {"component": "all"}


def build_resistance(ctx, spec, boundary_kind) -> ForceTerm:
    """The term of a resistance along the boundaries of ``boundary_kind``.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
        Its option ``component`` chooses which part of the relative velocity is resisted.
    boundary_kind : str
        ``"transform"``, ``"subduction"`` or ``"collision"``.

    Returns
    -------
    ForceTerm
        Only a resisting part: ``resisting[p, :, q, :]`` couples each pair of neighbours.
    """
    ctx.require_lines(boundary_kind, spec.label)
    arcs = ctx.world.boundary_set.of_kind(boundary_kind)
    theta, _, second, n = sphere.polyline_moments(arcs.a, arcs.b)
    strike = theta[:, None, None] * np.einsum("ei,ej->eij", n, n)
    full = theta[:, None, None] * np.eye(3) - second
    comp = spec.options["component"]
    K = {"all": full, "strike": strike, "normal": full - strike}[comp]
    left, right = arcs.arc_left, arcs.arc_right
    term = empty_term(ctx, spec, UNIT)
    scale = ctx.R ** 3
    for p, q in ((left, right), (right, left)):
        # torque on p: -c R^3 K (omega_p - omega_q)
        np.add.at(term.resisting, (p, slice(None), p, slice(None)), -scale * K)
        np.add.at(term.resisting, (p, slice(None), q, slice(None)), scale * K)
    return term


@dataclass(frozen=True)
class ResistanceKind:
    """One force kind of this module, in the shape every force kind has (see
    :mod:`torque.forces`): a resistance along the boundaries of one boundary kind.

    Attributes
    ----------
    KIND : str
        The force kind's name in hypothesis files.
    boundary_kind : str
        The boundaries it acts along.
    """

    KIND: str
    boundary_kind: str
    UNIT = UNIT
    KEYS = KEYS
    CHOICES = CHOICES
    DEFAULTS = DEFAULTS

    def default_label(self, options) -> str:
        """The term's label when the entry gives none: the kind.

        Parameters
        ----------
        options : dict
            The entry's options.

        Returns
        -------
        str
        """
        return self.KIND

    def build(self, ctx, spec) -> ForceTerm:
        """The :class:`ForceTerm` of one force entry of this kind.

        Parameters
        ----------
        ctx : Context
        spec : ForceSpec
            The force entry, its options' defaults filled in.

        Returns
        -------
        ForceTerm
        """
        return build_resistance(ctx, spec, self.boundary_kind)


KINDS = (ResistanceKind("transform", "transform"),
         ResistanceKind("subduction_resistance", "subduction"),
         ResistanceKind("collision", "collision"))
