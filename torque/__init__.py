"""torque: plate torques and Euler-pole prediction on a sphere.

The whole job in a few calls::

    import torque
    inputs = torque.Inputs.load("polygons_demo/world.toml")     # world and data, read once
    hyp = torque.load_hypothesis("polygons_demo/hypotheses/continental_drag.toml")
    omega = torque.read_motions("polygons_demo/motions.csv").for_world(inputs.world)
    system = torque.assemble(inputs.world, hyp, torque.compute_torques(inputs, hyp, omega))
    report = torque.analyse(system, omega)
    report.result().coefficients["slab"].value

Results are model-dependent research estimates, not inputs to hazard or engineering
decisions.
"""

from .balance import FIT_METHODS, assemble, predict
from .data import WorldData
from .diagnostics import FitResult, analyse
from .errors import InputError, ModelError
from .euler import Motions, to_no_net_rotation, velocity_field
from .hypothesis import hypothesis_from_dict
from .io import (Inputs, check_world, compute_torques, load_hypothesis, load_world,
                 read_motions, world_from_rings, write_motions)
from .lithosphere import Cooling, Physics
from .locate import PlateLocator
from .rank import rank
from .world import Boundary, Plate, World

__all__ = ["Boundary", "Cooling", "FIT_METHODS", "FitResult", "Inputs", "InputError",
           "ModelError", "Motions", "Physics", "Plate", "PlateLocator", "World", "WorldData",
           "analyse", "assemble", "check_world", "compute_torques", "hypothesis_from_dict",
           "load_hypothesis", "load_world", "predict", "rank", "read_motions",
           "to_no_net_rotation", "velocity_field", "world_from_rings", "write_motions"]
__version__ = "0.1.0"
