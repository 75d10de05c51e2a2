"""torque: plate torques and Euler-pole prediction on a sphere.

The whole job in a few calls::

    import torque
    world = torque.load_world("polygons_demo/world.toml")
    hyp = torque.load_hypothesis("polygons_demo/hypotheses/continental_drag.toml")
    omega = torque.read_motions("polygons_demo/motions.csv").for_world(world)
    system = torque.assemble(world, hyp, torque.compute_torques(world, hyp, omega))
    report = torque.analyse(system, omega)

Results are model-dependent research estimates, not inputs to hazard or engineering
decisions.
"""

from .balance import analyse, assemble, predict
from .errors import InputError
from .euler import Motions, read_motions, to_no_net_rotation, velocity_field, write_motions
from .forces import compute_torques
from .hypothesis import hypothesis_from_dict, load_hypothesis
from .lithosphere import Cooling, Physics
from .locate import PlateLocator
from .rank import rank
from .validate import check_world
from .world import Boundary, Plate, World, load_world, world_from_rings

__all__ = ["Boundary", "Cooling", "InputError", "Motions", "Physics", "Plate", "PlateLocator",
           "World", "analyse", "assemble", "check_world", "compute_torques",
           "hypothesis_from_dict", "load_hypothesis", "load_world", "predict", "rank",
           "read_motions", "to_no_net_rotation", "velocity_field", "world_from_rings",
           "write_motions"]
__version__ = "0.1.0"
