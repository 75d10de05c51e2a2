"""Frame changes carry the covariance of the Euler vectors through their linear map.

Checked against a Monte Carlo of the same transformation (draw the motions from their
covariance, change the frame of every draw, take the sample covariance): the propagation
of a covariance through a linear map, C' = T C T^T, is standard (e.g. Cox and Hart,
Plate Tectonics, box on adding angular velocities; common practice).
"""

import csv

import numpy as np
import pytest

from torque.euler import RAD_S_PER_DEG_MYR, Motions, to_no_net_rotation
from torque.io import read_motions
from torque.io import load_world

from .conftest import here

DEMO = here().parent / "polygons_demo"


def _motions_with_covariance(world, seed=0):
    rng = np.random.default_rng(seed)
    P = len(world.plates)
    omega = rng.normal(scale=0.5, size=(P, 3)) * RAD_S_PER_DEG_MYR
    A = rng.normal(scale=0.02, size=(P, 3, 3)) * RAD_S_PER_DEG_MYR
    cov = np.einsum("pij,pkj->pik", A, A)                  # positive definite, anisotropic
    return Motions(tuple(world.plate_names), omega, cov)


@pytest.mark.parametrize("frame", ["plate", "nnr"])
def test_propagated_covariance_matches_a_monte_carlo(frame):
    world = load_world(DEMO / "world.toml")
    m = _motions_with_covariance(world)
    fixed = world.plate_names[3]
    if frame == "plate":
        def change(x):
            return x.relative_to(fixed)
    else:
        def change(x):
            return to_no_net_rotation(world, x)[0]
    got = change(m)
    # the map is linear, so transforming the draws in one go is the same as one by one
    rng = np.random.default_rng(1)
    n = 40_000
    L = np.linalg.cholesky(m.cov)
    draws = m.omega[None] + np.einsum("pij,npj->npi", L,
                                      rng.standard_normal((n, *m.omega.shape)))
    if frame == "plate":
        moved = draws - draws[:, [world.plate_index[fixed]]]
    else:
        area, _, second = world.geometry.moments
        D = area[:, None, None] * np.eye(3) - second
        w_net = np.linalg.solve(D.sum(0), np.einsum("pij,npj->in", D, draws)).T
        moved = draws - w_net[:, None, :]
    dev = moved - moved.mean(axis=0)
    sample = np.einsum("npi,npj->pij", dev, dev) / (n - 1)
    # the mean moves exactly like a single vector
    np.testing.assert_allclose(got.omega, change(Motions(m.plates, m.omega)).omega)
    # sampling error of a covariance is about sqrt(2 / n) = 0.7 % of its size
    scale = np.linalg.norm(sample, axis=(1, 2))
    err = np.linalg.norm(got.cov - sample, axis=(1, 2))
    if frame == "plate":
        k = world.plate_index[fixed]
        assert np.all(got.cov[k] == 0) and np.allclose(got.omega[k], 0)
        keep = np.arange(len(world.plates)) != k
        assert np.all(err[keep] < 0.04 * scale[keep])
        # and exactly C_p + C_fixed (definition of the difference of independent vectors)
        np.testing.assert_allclose(got.cov[keep], m.cov[keep] + m.cov[k], rtol=1e-12)
    else:
        assert np.all(err < 0.04 * scale)


def test_frame_command_writes_the_propagated_covariance(tmp_path, cli):
    world = load_world(DEMO / "world.toml")
    src = read_motions(DEMO / "motions.csv")
    fixed = world.plate_names[0]
    out = tmp_path / "fixed.csv"
    status, _, err = cli("frame", DEMO / "world.toml", DEMO / "motions.csv",
                         "--to", f"plate:{fixed}", "-o", out)
    assert status == 0, err
    with open(out) as fh:
        rows = {r["plate"]: r for r in csv.DictReader(fh)}
    keys = ("cov_xx", "cov_xy", "cov_xz", "cov_yy", "cov_yz", "cov_zz")

    def cov(row):
        return np.array([float(row[k]) for k in keys])

    assert float(rows[fixed]["rate"]) == 0 and np.all(cov(rows[fixed]) == 0)
    idx = src.index()
    c = src.cov / RAD_S_PER_DEG_MYR ** 2
    for name, row in rows.items():
        if name == fixed:
            continue
        want = c[idx[name]] + c[idx[fixed]]
        np.testing.assert_allclose(cov(row), want[[0, 0, 0, 1, 1, 2], [0, 1, 2, 1, 2, 2]],
                                   rtol=1e-9)
