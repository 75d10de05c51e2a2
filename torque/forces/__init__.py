"""Torques of the forces on plates: one module per force kind, all of one shape.

Every kind module defines

* ``KIND``: its name in hypothesis files;
* ``UNIT``: the unit of its coefficient;
* ``KEYS``: its own keys in a ``[[force]]`` table, ``{key: description}`` (plus optional
  ``CHOICES`` for keys with a fixed set of values, ``POSITIVE`` for keys that must be > 0,
  and ``DEFAULTS``);
* ``default_label(options) -> str``;
* ``build(ctx, spec) -> ForceTerm``.

A :class:`ForceTerm` holds, for a coefficient of 1, the torque on every plate split into a
part independent of the plates' motion and a part linear in their angular velocities, so
that the torque of the term is ``coefficient * (driving + resisting @ omega)`` and the
torque balance is a linear system. Adding a kind is adding one module and one line in
:func:`_registry`; a module may also hold several kinds of one shape as objects with these
attributes, listed in its ``KINDS`` (the boundary resistances of
:mod:`torque.forces.resistance`).
"""

from __future__ import annotations

from .. import progress
from .base import ForceTerm, Pieces, empty_term
from .context import Context

__all__ = ["ForceTerm", "Pieces", "Context", "empty_term", "KINDS", "build_terms"]


def _registry():
    from . import drag, gpe, mantle, resistance, ridge, slab, suction
    kinds = []
    for m in (ridge, slab, suction, gpe, drag, mantle, resistance):
        # a module is one kind, or lists several in KINDS
        kinds += getattr(m, "KINDS", (m,))
    return {k.KIND: k for k in kinds}


KINDS = _registry()


def build_terms(ctx: Context) -> list:
    """The :class:`ForceTerm` of every force entry of the hypothesis, in order.

    Parameters
    ----------
    ctx : Context
        A hypothesis on a world's data.

    Returns
    -------
    list of ForceTerm
        One per force entry, in order.
    """
    forces = ctx.hypothesis.forces
    terms = []
    # a bar only where a term works on a grid (the others take milliseconds)
    gridded = any(s.kind in ("ridge", "mantle", "gpe") for s in forces)
    with progress.bar(len(forces), "building terms", minimum=1 if gridded else 10**9) as b:
        for spec in forces:
            b.set_postfix_str(spec.label, refresh=False)
            terms.append(KINDS[spec.kind].build(ctx, spec))
            b.update()
    return terms
