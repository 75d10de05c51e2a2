"""Rate-independent boundary resistance and the nonlinear torque balance.

The two-plate case solved by hand (our own derivation, written out here): plates Upper
(north) and Lower (south) with a transform along the whole equator, basal drag C on both
(hemisphere drag tensor (4 pi/3) I, Turcotte-style closed form as in test_forces), and a
torque T z_hat driving Upper. By symmetry both turn about z, at a (Upper) and b (Lower). A
shear stress tau on a fault of width W opposite the slip pushes each plate with
tau W per metre round 2 pi R of equator, a torque 2 pi tau W R^2 about z:

    Upper:  T - C R^4 (4 pi/3) a - 2 pi tau W R^2 = 0
    Lower:      - C R^4 (4 pi/3) b + 2 pi tau W R^2 = 0

while they slide (a > b, i.e. T > 4 pi tau W R^2); below that the fault is locked and
a = b = T / (2 C R^4 4 pi/3).
"""

import dataclasses

import numpy as np
import pytest

from torque import assemble, compute_torques, predict, sphere
from torque.inference.solvers import fit_velocity
from torque.errors import InputError
from torque.euler import RAD_S_PER_DEG_MYR
from torque.hypothesis import hypothesis_from_dict
from torque.world import Boundary

from .worlds import hemispheres

R = 6371e3
C = 5e13                  # Pa s/m
W = 20e3                  # m
TAU = 2e7                 # Pa


def equator_world():
    lon = np.arange(0.0, 361.0, 60.0)
    b = [Boundary("transform", "Upper", "Lower", sphere.lonlat_to_xyz(lon, 0 * lon))]
    return hemispheres(b)


def system(T, tau=TAU, smoothing=1e-5, tau_free=False):
    w = equator_world()
    h = hypothesis_from_dict({"force": [
        {"kind": "ridge", "coefficient": 1.0, "label": "drive"},
        {"kind": "drag", "coefficient": C},
        {"kind": "transform", "law": "constant-stress", "smoothing_mm_yr": smoothing,
         **({} if tau_free else {"coefficient": tau})}]})
    # the driving torque is put in by hand: the physics under test is drag and friction
    drag, friction = compute_torques(w, dataclasses.replace(h, forces=h.forces[1:]))
    drive = dataclasses.replace(drag, label="drive", kind="ridge", spec=h.forces[0],
                                unit="dimensionless", driving=np.array([[0, 0, T], [0, 0, 0]]),
                                resisting=np.zeros_like(drag.resisting))
    return assemble(w, h, [drive, drag, friction])


def by_hand(T, tau=TAU):
    k = C * R ** 4 * 4 * np.pi / 3
    f = 2 * np.pi * tau * W * R ** 2
    if T > 2 * f:
        return (T - f) / k, f / k
    return T / (2 * k), T / (2 * k)


def test_sliding_plates_match_the_hand_solution():
    T = 3 * 4 * np.pi * TAU * W * R ** 2          # well above the locking threshold
    s = system(T)
    omega = predict(s, [1.0, C, TAU])
    a, b = by_hand(T)
    assert s.units[2] == "Pa"
    np.testing.assert_allclose(omega[:, 2], [a, b], rtol=1e-8)
    np.testing.assert_allclose(omega[:, :2], 0, atol=1e-12 * a)
    # with no stress the plates part: Upper alone turns at T / k
    omega0 = predict(s, [1.0, C, 0.0])
    np.testing.assert_allclose(omega0[:, 2], [T / (C * R ** 4 * 4 * np.pi / 3), 0],
                               atol=1e-12 * a)


def test_locked_plates_turn_together():
    # below the threshold the regularised fault creeps at a speed of order the smoothing
    # speed: a and b agree with the locked solution to that order
    T = 0.5 * 4 * np.pi * TAU * W * R ** 2
    omega = predict(system(T, smoothing=1e-4), [1.0, C, TAU])
    a, b = by_hand(T)
    np.testing.assert_allclose(omega[:, 2], [a, b], rtol=1e-3)
    slip_mm_yr = R * (omega[0, 2] - omega[1, 2]) * 1e3 * 3.15576e13 / 1e6
    assert 0 < slip_mm_yr < 1e-3


def test_fit_in_velocity_space_recovers_the_stress():
    T = 3 * 4 * np.pi * TAU * W * R ** 2
    truth = predict(system(T), [1.0, C, TAU])
    s = system(T, tau_free=True)
    fit = fit_velocity(s, truth)
    assert fit.values[2] == pytest.approx(TAU, rel=1e-6)


def test_jacobian_matches_finite_differences_and_the_sum_converges():
    # the analytic Jacobian against central differences; the midpoint sum over pieces
    # against itself at finer pieces along 100 degrees of the equator (over a whole period
    # of its integrand, pi here, the midpoint sum is exact to rounding): second order, the
    # error falls ~16x per 4x finer pieces
    lon = np.array([0.0, 50.0, 100.0])
    lon2 = np.array([100.0, 180.0, 270.0, 360.0])
    w = hemispheres([Boundary("transform", "Upper", "Lower", sphere.lonlat_to_xyz(lon, 0 * lon)),
                     Boundary("subduction", "Upper", "Lower",
                              sphere.lonlat_to_xyz(lon2, 0 * lon2), subducting="Lower")])
    omega = np.array([[0.1, 0.0, 0.3], [0.0, -0.2, 0.05]]) * RAD_S_PER_DEG_MYR
    torques = []
    for km in (200.0, 50.0, 12.5, 3.125):
        term, = compute_torques(w, hypothesis_from_dict({"force": [
            {"kind": "transform", "law": "constant-stress", "piece_km": km}]}))
        torques.append(term.torque(omega))
    part = term.nonlinear
    J = part.jacobian(omega).reshape(6, 6)
    h = 1e-6 * RAD_S_PER_DEG_MYR
    num = np.zeros((6, 6))
    for j in range(6):
        e = np.zeros(6)
        e[j] = h
        num[:, j] = ((part.torque(omega + e.reshape(2, 3)) - part.torque(omega - e.reshape(2, 3)))
                     .ravel() / (2 * h))
    np.testing.assert_allclose(J, num, rtol=1e-5, atol=1e-6 * np.abs(J).max())
    errs = [np.abs(t - torques[-1]).max() for t in torques[:-1]]
    assert errs[1] < errs[0] / 10 and errs[2] < errs[1] / 10


def test_constant_stress_keys_and_errors():
    w = equator_world()
    with pytest.raises(InputError, match="are for a constant-stress resistance"):
        compute_torques(w, hypothesis_from_dict({"force": [
            {"kind": "transform", "fault_width_km": 10.0}]}))
    term, = compute_torques(w, hypothesis_from_dict({"force": [
        {"kind": "transform", "law": "constant-stress"}]}))
    assert term.velocity_dependent and term.unit == "Pa"
    with pytest.raises(ValueError, match="depends on plate motion"):
        term.torque()
