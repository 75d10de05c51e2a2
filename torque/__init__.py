"""torque: plate torques and Euler-pole prediction on a sphere.

Results are model-dependent research estimates, not inputs to hazard or engineering
decisions.
"""

from .errors import InputError
from .locate import PlateLocator
from .validate import check_world
from .world import Boundary, Plate, World, load_world, world_from_rings

__all__ = ["Boundary", "InputError", "Plate", "PlateLocator", "World", "check_world",
           "load_world", "world_from_rings"]
__version__ = "0.1.0"
