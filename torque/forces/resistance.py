"""Resistance at plate boundaries proportional to the relative velocity (shared by the
``transform``, ``trench`` and ``collision`` kinds).

On a boundary between plates P (left) and Q (right) the force per unit length on P is
``-c (v_P - v_Q)``, or only its along-strike or boundary-normal part (``component``). Its
torque on P, on the unit sphere with ``Delta = omega_P - omega_Q``, is
``-c R^3 K Delta`` with, for each great-circle arc of length theta and pole n:
``K = theta I - int r r^T ds`` (all), ``theta n n^T`` (along strike: ``r x t = n`` is
constant along the arc), or their difference (normal). All exact. The coefficient c is in
Pa s (N per metre of boundary per m/s).
"""

from __future__ import annotations

import numpy as np

from .. import sphere
from .base import ForceTerm, empty_term

UNIT = "Pa s"
KEYS = {"component": '"all" (default), "strike" or "normal": which part of the relative '
                     'velocity is resisted'}
CHOICES = {"component": ("all", "strike", "normal")}
DEFAULTS = {"component": "all"}


def build_resistance(ctx, spec, boundary_kind) -> ForceTerm:
    ctx.require_lines(boundary_kind, spec.label)
    bnd = ctx.world.boundaries
    lines = ctx.lines(boundary_kind)
    a = np.concatenate([bnd[k].xyz[:-1] for k in lines])
    b = np.concatenate([bnd[k].xyz[1:] for k in lines])
    line = np.concatenate([np.full(len(bnd[k].xyz) - 1, k) for k in lines])
    theta, _, second, n = sphere.polyline_moments(a, b)
    strike = theta[:, None, None] * np.einsum("ei,ej->eij", n, n)
    full = theta[:, None, None] * np.eye(3) - second
    comp = spec.options["component"]
    K = {"all": full, "strike": strike, "normal": full - strike}[comp]
    left = ctx.plate_ids([x.left for x in bnd])[line]
    right = ctx.plate_ids([x.right for x in bnd])[line]
    term = empty_term(ctx, spec, UNIT)
    scale = ctx.R ** 3
    for p, q in ((left, right), (right, left)):
        # torque on p: -c R^3 K (omega_p - omega_q)
        np.add.at(term.resisting, (p, slice(None), p, slice(None)), -scale * K)
        np.add.at(term.resisting, (p, slice(None), q, slice(None)), scale * K)
    return term
