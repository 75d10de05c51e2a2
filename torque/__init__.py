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

from ._lazy import lazy_exports
from ._version import __version__  # noqa: F401

#: Where each name of the package lives: imported on first use (PEP 562), so that
#: ``import torque`` and ``torque --help`` do not load scipy and the rest.
_EXPORTS = {
    "FIT_METHODS": "inference.methods", "assemble": "inference.system",
    "predict": "inference.solvers", "WorldData": "data", "FitResult": "results",
    "analyse": "inference.analysis",
    "InputError": "errors", "ModelError": "errors", "TorqueError": "errors", "Motions": "euler",
    "to_no_net_rotation": "euler", "velocity_field": "euler",
    "hypothesis_from_dict": "hypothesis", "Inputs": "io", "check_world": "io",
    "compute_torques": "io", "load_hypothesis": "io", "load_world": "io",
    "read_motions": "io", "world_from_rings": "io", "write_motions": "io",
    "Cooling": "lithosphere", "Physics": "lithosphere", "PlateLocator": "locate",
    "rank": "inference.ranking", "Boundary": "world", "Plate": "world", "World": "world",
}


__getattr__, __dir__ = lazy_exports(__name__, globals(), _EXPORTS)

__all__ = ["Boundary", "Cooling", "FIT_METHODS", "FitResult", "Inputs", "InputError",
           "ModelError", "Motions", "TorqueError", "Physics", "Plate", "PlateLocator", "World", "WorldData",
           "analyse", "assemble", "check_world", "compute_torques", "hypothesis_from_dict",
           "load_hypothesis", "load_world", "predict", "rank", "read_motions",
           "to_no_net_rotation", "velocity_field", "world_from_rings", "write_motions"]
