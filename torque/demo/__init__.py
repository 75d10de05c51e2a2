"""The bundled demo: an invented planet (:mod:`torque.demo.planet`, the generator), its
past configurations (:mod:`torque.demo.through_time`) and ``torque demo``
(:mod:`torque.demo.runner`, the whole job and its report)."""

from .planet import BUNDLED, voronoi_regions, write
from .runner import run
from .through_time import write_series

__all__ = ["BUNDLED", "run", "voronoi_regions", "write", "write_series"]
