"""What every hypothesis on one world shares (WorldData), and the force context over it.

Sources: closed forms of the drag tensor int (I - r r^T) dA: (4 pi / 3) I over a hemisphere
and (8 pi / 3) I over the whole sphere (int r r^T dA = (A / 3) I for any region symmetric
under the cube's rotations; written out in torque/sphere.py).
"""

import numpy as np
import pytest

from torque.data import WorldData
from torque.errors import InputError
from torque.euler import pole_to_vector
from torque.forces.context import Context
from torque.hypothesis import hypothesis_from_dict
from torque.world import Boundary

from .test_continents import cap
from .worlds import hemispheres

HYP = hypothesis_from_dict({"force": [{"kind": "drag"}]})


def test_drag_tensors_of_the_regions():
    cont, _, _ = cap(30.0, 0.0, 20.0)
    data = WorldData(hemispheres(), continents=cont)
    D = data.drag_tensor("all")
    np.testing.assert_allclose(D, np.broadcast_to(4 * np.pi / 3 * np.eye(3), (2, 3, 3)),
                               atol=1e-14)
    np.testing.assert_allclose(D.sum(0), 8 * np.pi / 3 * np.eye(3), atol=1e-14)
    np.testing.assert_allclose(data.drag_tensor("ocean") + data.drag_tensor("continent"), D,
                               atol=1e-14)
    with pytest.raises(InputError, match="needs continents"):
        WorldData(hemispheres()).drag_tensor("ocean")


def test_the_core_reads_no_file():
    # a world whose data files do not exist: the context, built on WorldData, never tries
    # to read them (only torque.io.Inputs reads files)
    w = hemispheres()
    w = type(w)(**{**w.__dict__, "paths": {"continents": "/nowhere/c.geojson",
                                          "ages": "/nowhere/a.nc"}})
    ctx = Context(WorldData(w), HYP)
    assert ctx.continents is None and ctx.data.ages is None
    assert ctx.age_grid_if_any() is None


def test_synthesised_ages_are_made_once_for_every_hypothesis():
    # two hypotheses with the same motions share the ages made from the ridges
    ridge = Boundary("ridge", "Upper", "Lower",
                     np.array([[1.0, 0, 0], [0, 1.0, 0], [-1.0, 0, 0], [0, -1.0, 0],
                               [1.0, 0, 0]]))
    data = WorldData(hemispheres([ridge]))
    omega = np.array([pole_to_vector(0.0, 0.0, 0.5), pole_to_vector(0.0, 0.0, -0.5)])
    a = Context(data, HYP, omega).ages
    b = Context(data, hypothesis_from_dict({"force": [{"kind": "ridge"}]}), omega).ages
    assert a is b and a[0].age_myr.shape == (360, 720)
    assert "synthesised" in a[1][0]
