"""The bundled demo: an invented planet (:mod:`torque.demo.planet`, the generator) and
``torque demo`` (:mod:`torque.demo.runner`, the whole job and its report)."""

from .planet import BUNDLED, voronoi_regions, write
from .runner import run

__all__ = ["BUNDLED", "run", "voronoi_regions", "write"]
