"""The registry behind ``torque map --kind``: what each kind shows, needs and allows, and
how it draws from a :class:`MapInputs` (made by :func:`torque.workflows.map_inputs`). A
new kind is one entry of :data:`KINDS`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ...errors import InputError
from ...euler import pole_to_vector
from .charts import budget_chart, torque_chart, torque_globe
from .world_maps import misfit_map, plates_map, poles_map, velocity_map

__all__ = ["MapInputs", "MapKind", "KINDS"]


# ----------------------------------------------------------------------------------------
# the registry behind `torque map --kind`: a new kind is one entry
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True)
class MapInputs:
    """What a map may draw from, already read and checked (None where not given).

    Attributes
    ----------
    inputs : Inputs
        The world and its data (:class:`torque.io.Inputs`, or any
        :class:`~torque.data.WorldData`).
    observed, predicted : ndarray, shape (P, 3), optional
        Euler vectors (rad/s) in world plate order.
    fit : FitResult, optional
        The results of ``torque fit``.
    fit_path : str, optional
        The fit's file, named in messages.
    hypothesis : Hypothesis, optional
    torques : TorqueTable, optional
        The hypothesis' torques at the fit's coefficients and in its frame.
    frame : {"mantle", "motions"}
        The frame ``observed`` and ``predicted`` are in (see
        :func:`torque.workflows.map_inputs`, which makes these).
    """

    inputs: object
    observed: np.ndarray | None = None
    predicted: np.ndarray | None = None
    fit: object = None
    fit_path: str | None = None
    hypothesis: object = None
    torques: object = None
    frame: str = "mantle"

    def __repr__(self) -> str:
        given = [k for k in ("observed", "predicted", "fit", "hypothesis")
                 if getattr(self, k) is not None]
        return f"MapInputs({self.inputs!r}, given: {', '.join(given) or 'none'})"

    @property
    def world(self):
        """The world."""
        return self.inputs.world

    @property
    def continents(self):
        """The world's continents, or None."""
        return self.inputs.continents


@dataclass(frozen=True)
class MapKind:
    """One kind of figure: what it shows, which inputs it needs and allows, how to draw.

    Attributes
    ----------
    shows : str
        What the figure shows (for --help).
    needs, allows : tuple of str
        Inputs among ``motions``, ``predicted``, ``fit``, ``hypothesis`` that the kind
        needs, and that it can use.
    draw : callable
        ``draw(inputs: MapInputs, path) -> path``.
    """

    shows: str
    needs: tuple
    allows: tuple
    draw: object                              # draw(inputs: MapInputs, path)

    def __repr__(self) -> str:
        return f"MapKind({self.shows!r}, needs {list(self.needs)})"


def _draw_torques(inp: MapInputs, path):
    return torque_chart(path, inp.torques)


def _draw_misfit(inp: MapInputs, path):
    if inp.fit is not None:
        if inp.observed is not None or inp.predicted is not None:
            raise InputError("a misfit map takes --fit, or --motions with --predicted, not "
                             "both", hint="the fit's poles are both in the mantle's frame")
        obs, pred = (pole_to_vector(*np.array([[getattr(p, k).lat, getattr(p, k).lon,
                                                 getattr(p, k).rate]
                                                for p in inp.fit.plates]).T)
                     for k in ("observed", "predicted"))
        order = [inp.fit.plate_names.index(n) for n in inp.world.plate_names]
        return misfit_map(inp.world, path, obs[order], pred[order])
    if inp.observed is None or inp.predicted is None:
        raise InputError("a misfit map needs --fit, or --motions and --predicted")
    return misfit_map(inp.world, path, inp.observed, inp.predicted)


def _draw_torque_globe(inp: MapInputs, path):
    return torque_globe(path, inp.world, inp.torques)


def _draw_velocities(inp: MapInputs, path):
    return velocity_map(inp.world, path, inp.observed, inp.predicted, inp.continents,
                        inp.frame if inp.fit is not None else None)


KINDS = {
    "plates": MapKind("plates, continents and boundaries by kind", (), (),
                      lambda i, p: plates_map(i.world, p, i.continents)),
    "velocities": MapKind("velocity arrows (needs --motions; --predicted adds predicted "
                          "arrows; --fit puts both in its mantle frame, or with --frame "
                          "motions in the motions' frame)", ("motions",),
                          ("motions", "predicted", "fit"), _draw_velocities),
    "poles": MapKind("observed and predicted poles with 95 % ellipses (needs --fit)",
                     ("fit",), ("fit",), lambda i, p: poles_map(i.world, p, i.fit)),
    "misfit": MapKind("velocity misfit (needs --fit, whose observed and predicted poles "
                      "are both in the mantle's frame, or --motions and --predicted)",
                      (), ("motions", "predicted", "fit"), _draw_misfit),
    "budget": MapKind("force budget per plate (needs --fit)", ("fit",), ("fit",),
                      lambda i, p: budget_chart(p, i.fit)),
    "torques": MapKind("torque of each term on each plate (needs --hypothesis, --motions, "
                       "--fit)", ("hypothesis", "motions", "fit"),
                       ("hypothesis", "motions", "fit"), _draw_torques),
    "torque-globe": MapKind("each term's torque as arrows at plate centroids on two "
                            "hemispheres (needs --hypothesis, --motions, --fit)",
                            ("hypothesis", "motions", "fit"),
                            ("hypothesis", "motions", "fit"), _draw_torque_globe),
}
