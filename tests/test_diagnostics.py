"""Result objects print their sizes and labels, not their arrays; problems of the model
itself are ModelError (a kind of InputError, so the command line exits 2)."""

import numpy as np
import pytest

from torque.balance import assemble, predict
from torque.diagnostics import analyse
from torque.errors import InputError, ModelError
from torque.io import read_motions
from torque import compute_torques
from torque.hypothesis import hypothesis_from_dict
from torque.io import load_hypothesis
from torque.io import load_world

from .conftest import here

DEMO = here().parent / "polygons_demo"


@pytest.fixture(scope="module")
def demo_fit():
    world = load_world(DEMO / "world.toml")
    motions = read_motions(DEMO / "motions.csv")
    hyp = load_hypothesis(DEMO / "hypotheses" / "ridge_drag.toml")
    omega = motions.for_world(world)
    terms = compute_torques(world, hyp, omega)
    system = assemble(world, hyp, terms)
    return world, motions, terms, system, analyse(system, omega)


def test_reprs_are_short_and_name_what_matters(demo_fit):
    world, motions, terms, system, report = demo_fit
    texts = [repr(x) for x in (world, world.geometry, motions, *terms, system, report,
                               report.preferred)]
    for t in texts:
        assert len(t) < 300 and "array(" not in t, t
    assert "14 plates" in repr(world) and "'Orrery'" in repr(world)
    assert "drag_all" in repr(system) and "1 free" in repr(system)
    assert "velocity-dependent" in repr(terms[1])
    assert repr(report.preferred).startswith("Fit('velocity', ridge=1,")


def test_model_problems_are_model_errors(demo_fit):
    world, motions, *_ = demo_fit
    hyp = hypothesis_from_dict({"force": [{"kind": "ridge", "coefficient": 1.0}]})
    system = assemble(world, hyp, compute_torques(world, hyp, motions.for_world(world)))
    with pytest.raises(ModelError, match="resists the motion of any plate") as info:
        predict(system, system.fixed)
    assert isinstance(info.value, InputError)
    free = hypothesis_from_dict({"force": [{"kind": "ridge", "coefficient": "free"},
                                           {"kind": "drag", "coefficient": "free"}]})
    system = assemble(world, free, compute_torques(world, free, motions.for_world(world)))
    with pytest.raises(ModelError, match="every coefficient is free"):
        analyse(system, motions.for_world(world))
    assert np.all(np.isnan(system.fixed))
