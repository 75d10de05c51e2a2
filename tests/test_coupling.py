"""Laterally variable basal drag: the coupling of a grid (drag coupling = "grid").

Closed forms (vector calculus on the sphere, written out here):
* a uniform coupling C gives the exact polygon tensor C int (I - r r^T) dA;
* on the northern hemisphere with C = C0 sin(lat) = C0 z: int z dA = pi,
  int z^3 dA = 2 pi int_0^1 z^3 dz = pi/2, int z x^2 dA = int z (1 - z^2)/2 dA = pi/4, so
  int C (I - r r^T) dA = C0 diag(3 pi/4, 3 pi/4, pi/2).
"""

import numpy as np
import pytest

import torque
from torque.errors import InputError
from torque.grids import CouplingGrid

from .conftest import here
from .worlds import hemispheres, hyp

R = 6371e3


def grid(step, values):
    lon = np.arange(-180, 180, step) + step / 2
    lat = np.arange(-90, 90, step) + step / 2
    LON, LAT = np.meshgrid(lon, lat)
    return CouplingGrid(lon, lat, np.broadcast_to(values(LON, LAT), LON.shape).astype(float))


def tensor(term):
    return -np.einsum("pipj->pij", term.resisting) / R ** 4


def test_uniform_grid_gives_the_exact_tensor_to_the_grid_error():
    # A uniform coupling grid reproduces the exact polygon tensor times C to the grid's
    # error at plate edges: measured 0.028 % median, 0.057 % max at 0.5 degree on the
    # demo's 14 plates, 0.0075 % and 0.020 % at 0.25 degree
    inputs = torque.Inputs.load(here().parent / "polygons_demo" / "world.toml")
    exact, = torque.compute_torques(inputs, hyp({"kind": "drag"}))
    D = tensor(exact)
    scale = np.abs(D).max(axis=(1, 2))
    errs = []
    for step in (0.5, 0.25):
        data = torque.WorldData(inputs.world, coupling=grid(step, lambda x, y: 3e14))
        term, = torque.compute_torques(data, hyp({"kind": "drag", "coupling": "grid"}))
        assert term.unit == "dimensionless"
        errs.append(np.abs(tensor(term) / 3e14 - D).max(axis=(1, 2)) / scale)
    assert np.median(errs[0]) < 4e-4 and errs[0].max() < 1e-3
    assert errs[1].max() < 0.5 * errs[0].max()            # it converges with the step


def test_coupling_varying_with_latitude_matches_the_closed_form():
    # C = C0 sin(lat) on the northern hemisphere: C0 diag(3 pi/4, 3 pi/4, pi/2)
    # (module docstring); the grid sum converges to it, at second order here (cell edges
    # on the equator): 3.8e-5 at 1 degree, 9.5e-6 at 0.5 (measured)
    w = hemispheres()
    want = 2e14 * np.diag([0.75 * np.pi, 0.75 * np.pi, 0.5 * np.pi])
    errs = []
    for step in (1.0, 0.5):
        C = grid(step, lambda lon, lat: 2e14 * np.clip(np.sin(np.radians(lat)), 0, None))
        term, = torque.compute_torques(torque.WorldData(w, coupling=C),
                                       hyp({"kind": "drag", "coupling": "grid"}))
        errs.append(np.abs(tensor(term)[0] - want).max() / np.abs(want).max())
    assert errs[1] < 2e-5 and errs[1] < errs[0] / 3


def test_coupling_grid_by_region_and_its_errors(tmp_path):
    # ocean and continent parts of a uniform grid add up to the whole
    inputs = torque.Inputs.load(here().parent / "polygons_demo" / "world.toml")
    data = torque.WorldData(inputs.world, continents=inputs.continents,
                            coupling=grid(0.5, lambda x, y: 1.0))
    whole, ocean, land = torque.compute_torques(data, hyp(
        {"kind": "drag", "coupling": "grid"},
        {"kind": "drag", "coupling": "grid", "region": "ocean"},
        {"kind": "drag", "coupling": "grid", "region": "continent"}))
    np.testing.assert_allclose(tensor(ocean) + tensor(land), tensor(whole), rtol=1e-12,
                               atol=1e-14)
    with pytest.raises(InputError, match="needs a drag coupling grid"):
        torque.compute_torques(torque.WorldData(inputs.world),
                               hyp({"kind": "drag", "coupling": "grid"}))


def test_coupling_grid_file_from_viscosity_and_thickness(tmp_path):
    # C = eta / h per node (the channel of a Couette flow, shear stress eta u / h;
    # Turcotte and Schubert 2002, ch. 6, the section number from memory)
    import xarray as xr
    from torque.io.grids import read_coupling
    lon = np.arange(-180, 180, 2.0) + 1
    lat = np.arange(-90, 90, 2.0) + 1
    eta = np.full((len(lat), len(lon)), 1e20)
    h = np.full_like(eta, 2e5)
    h[:, :10] = 1e5
    ds = xr.Dataset({"viscosity_pa_s": (("lat", "lon"), eta),
                     "thickness_m": (("lat", "lon"), h)}, coords={"lon": lon, "lat": lat})
    path = tmp_path / "coupling.nc"
    ds.to_netcdf(path, engine="h5netcdf")
    g = read_coupling(path)
    assert g.coupling_pa_s_m[0, 0] == 1e15 and g.coupling_pa_s_m[0, 20] == 5e14
    bad = ds.assign(thickness_m=(("lat", "lon"), np.where(h > 1.5e5, 0.0, h)))
    bad.to_netcdf(tmp_path / "bad.nc", engine="h5netcdf")
    with pytest.raises(InputError, match="thickness_m must be finite and positive"):
        read_coupling(tmp_path / "bad.nc")
    xr.Dataset({"speed": (("lat", "lon"), eta)}, coords={"lon": lon, "lat": lat}).to_netcdf(
        tmp_path / "none.nc", engine="h5netcdf")
    with pytest.raises(InputError, match="needs 'coupling_pa_s_m'"):
        read_coupling(tmp_path / "none.nc")
