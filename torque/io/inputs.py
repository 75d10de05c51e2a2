"""The inputs of a command: a world and its data files, read and checked once.

:class:`Inputs` is a :class:`~torque.data.WorldData` that reads the world's optional data
files (continents, ages, mantle flow, drag coupling, topography) the first time a term needs them, so a world whose
hypothesis never uses its age grid never reads it, and a world used by many hypotheses
(``torque rank``, the demo) reads, locates and clips everything once.
"""

from __future__ import annotations

from pathlib import Path

from ..continents import MaskContinents
from ..data import WorldData
from ..forces import build_terms
from ..forces.context import Context
from ..validate import run_checks
from ..validate import require_valid
from .geojson import read_continents
from .grids import read_ages, read_coupling, read_flow, read_topography
from .world import FROM_AGES, load_world

__all__ = ["Inputs", "compute_torques", "check_world"]


class Inputs(WorldData):
    """A world and its data files, each read (and checked) once, on first use.

    Parameters
    ----------
    world : World
        Its ``paths`` name the data files to read.
    continents, ages, flow : optional
        Data objects in memory, used instead of the world's files.

    Examples
    --------
    >>> inputs = Inputs.load("polygons_demo/world.toml")
    >>> inputs
    Inputs(World('Orrery', 14 plates, 36 boundary lines, radius 6371 km), data: continents, ages, coupling, topography)
    >>> inputs.ages.age_myr.shape          # read on first use, then kept
    (360, 720)
    >>> inputs.ages is inputs.ages
    True
    """

    @classmethod
    def load(cls, path, *, valid: bool = True) -> "Inputs":
        """Read a world file; with ``valid``, refuse a world with errors.

        Parameters
        ----------
        path : str or Path
            The world file (TOML).
        valid : bool
            Raise InputError listing the world's errors (see
            :func:`torque.validate.require_valid`).
        """
        world = load_world(path)
        return cls(require_valid(world) if valid else world)

    @property
    def path(self) -> Path | None:
        """The world file, resolved (None for a world built in memory)."""
        p = self.world.paths.get("world")
        return None if p is None else Path(p).resolve()

    def _read(self, key: str):
        path = self.world.paths.get(self.FILE_KEYS[key])
        if path is None:
            return None
        if key == "continents":
            if path == FROM_AGES:
                return MaskContinents.from_ages(self._data("ages"))
            return read_continents(path, self.world.winding)
        return {"ages": read_ages, "flow": read_flow, "coupling": read_coupling,
                "topography": read_topography}[key](path)

    def context(self, hypothesis, omega=None) -> Context:
        """A :class:`~torque.forces.context.Context` of a hypothesis on these inputs.

        Parameters
        ----------
        hypothesis : Hypothesis
        omega : ndarray, shape (P, 3), optional
            rad/s, world plate order.

        Returns
        -------
        Context
        """
        return Context(self, hypothesis, omega)


def compute_torques(world, hypothesis, omega=None, **data) -> list:
    """The force terms of a hypothesis on a world, reading the world's data files as needed.

    Parameters
    ----------
    world : World or WorldData
        A bare world reads the files its ``paths`` name (continents, ages, mantle flow)
        when a term needs them.
    hypothesis : Hypothesis
    omega : ndarray, shape (P, 3), optional
        Angular velocities (rad/s) in world plate order: needed to synthesise ages when the
        world has none, and to evaluate velocity-dependent terms.
    **data
        ``ages``, ``continents``, ``flow`` objects to use instead of the world's files.

    Returns
    -------
    list of ForceTerm
        One per force entry of the hypothesis, in order.

    Examples
    --------
    >>> from torque.io import Inputs, load_hypothesis, read_motions
    >>> inputs = Inputs.load("polygons_demo/world.toml")
    >>> hyp = load_hypothesis("polygons_demo/hypotheses/continental_drag.toml")
    >>> omega = read_motions("polygons_demo/motions.csv").for_world(inputs.world)
    >>> terms = compute_torques(inputs, hyp, omega)
    >>> [(t.label, t.unit, t.velocity_dependent) for t in terms]   # doctest: +NORMALIZE_WHITESPACE
    [('ridge', 'dimensionless', False), ('slab', 'dimensionless', False),
     ('drag_ocean', 'Pa s/m', True), ('drag_continent', 'Pa s/m', True)]
    >>> terms[0].torque().shape            # N m on each of the 14 plates
    (14, 3)
    """
    if not isinstance(world, WorldData):
        world = Inputs(world, **data)
    return build_terms(Context(world, hypothesis, omega))


def check_world(world):
    """Run every check on a world, reading its continents file if it names one.

    Parameters
    ----------
    world : World or WorldData
        A bare world is wrapped in :class:`Inputs`, so that the continents its ``paths``
        name are read and checked too (:func:`torque.validate.run_checks` itself reads no
        file).

    Returns
    -------
    CheckReport
    """
    return run_checks(world if isinstance(world, WorldData) else Inputs(world))
