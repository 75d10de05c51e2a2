"""Potential energy of continents: the column model, the margin force, the body force.

Closed forms and published values (written out beside each check):
* the horizontal force of an Airy-compensated range of height h, crust h_c and root
  b = rho_c h / (rho_m - rho_c): F = rho_c g h (h/2 + h_c + b/2) (Turcotte and Schubert
  2002, chapter 2; the section number from memory);
* the ridge push of the half-space model, g rho_m alpha dT kappa t [1 + 2 rho_m alpha dT /
  (pi (rho_m - rho_w))] (Turcotte and Schubert 2002, eq. 6-405);
* a line force F along the outward normal of an arc walked with the region on its left has
  torque R^2 F int r x nu ds = R^2 F int t ds = R^2 F (r_end - r_start);
* Stokes' theorem on the sphere: int_S r x grad U dA = oint U dr.
"""

import numpy as np
import pytest

import torque
from torque import sphere
from torque.columns import ColumnModel
from torque.continents import Continents
from torque.errors import InputError
from torque.grids import TopographyGrid
from torque.lithosphere import Cooling, Physics

from .worlds import hemispheres, hyp

R = 6371e3


def quad(corners):
    """A continent with great-circle edges through the corners (lon, lat), walked
    counter-clockwise (continent on the left)."""
    lon, lat = np.asarray(corners, float).T
    return Continents(sphere.lonlat_to_xyz(lon, lat), np.array([0, len(lon)]),
                      np.array([False]), np.array([0]))


def topo(step, elevation):
    lon = np.arange(-180, 180, step) + step / 2
    lat = np.arange(-90, 90, step) + step / 2
    LON, LAT = np.meshgrid(lon, lat)
    return TopographyGrid(lon, lat, elevation(LON, LAT))


def test_column_matches_the_mountain_range_formula():
    # Airy range of 3 km on 35 km crust, rho_c 2800, rho_m 3330, g 9.81 (values of our
    # own): rho_c g h (h/2 + h_c + b/2), b = 2800 * 3000 / 530 = 15.85 km, gives
    # 2800 * 9.81 * 3000 * (1.5 + 35 + 7.925) km = 3.660e12 N/m, worked by hand
    m = ColumnModel()
    b = 2800 * 3000 / 530
    assert b == pytest.approx(15849, abs=1)
    hand = 2800 * 9.81 * 3000 * (1500 + 35e3 + b / 2)
    assert hand == pytest.approx(3.660e12, rel=1e-3)
    assert float(m.continental_gpe(3000.0)) == pytest.approx(hand, rel=1e-12)
    # the same with the crust given explicitly, and independent of the compensation depth
    # (both columns compensated above it)
    deep = ColumnModel(compensation_depth_m=150e3)
    assert float(deep.continental_gpe(3000.0, 35e3 + 3000 + b)) == pytest.approx(hand,
                                                                                 rel=1e-12)
    # a column out of isostasy does depend on it: one the tool integrates, and says so
    assert float(m.continental_gpe(3000.0, 35e3)) != pytest.approx(
        float(deep.continental_gpe(3000.0, 35e3)), rel=1e-3)
    with pytest.raises(ValueError, match="compensation depth"):
        m.continental_gpe(3000.0, 104e3)


def margin_world():
    # a continent straddling the equator between lon -20 and 20: its margin inside the
    # northern plate Upper runs from (20, 0) round to (-20, 0)
    cont = quad([(-20, -20), (20, -20), (20, 20), (-20, 20)])
    return hemispheres(), cont


def test_margin_force_of_a_sea_level_continent_is_the_ridge_push():
    # a sea-level continent has the potential energy of a ridge (sea_level_gpe_n_m = 0),
    # so its margin pushes oceanward by F_rp(t) of the sea floor beside it; half-space
    # model, compared with the closed form eq. 6-405; torque R^2 F (r_end - r_start)
    w, cont = margin_world()
    t = 80.0
    term, = torque.compute_torques(torque.WorldData(w, continents=cont), hyp(
        {"kind": "gpe", "coefficient": 1.0, "age_myr": t}, model="half-space"))
    F = float(Cooling(Physics(model="half-space")).ridge_push_half_space_closed_n_m(t))
    d = 2 * np.sin(np.radians(20.0))
    np.testing.assert_allclose(term.torque()[0], [0, -R**2 * F * d, 0], rtol=1e-8,
                               atol=1e-8 * R**2 * F)
    np.testing.assert_allclose(term.torque()[1], [0, R**2 * F * d, 0], rtol=1e-8,
                               atol=1e-8 * R**2 * F)
    assert term.unit == "dimensionless"


def test_margin_force_of_a_plateau_adds_its_column_energy():
    # a 3 km plateau beside 80 Myr sea floor: F = rho_c g h (h/2 + h_c + b/2) + F_rp(t)
    w, cont = margin_world()
    term, = torque.compute_torques(torque.WorldData(w, continents=cont), hyp(
        {"kind": "gpe", "coefficient": 1.0, "age_myr": 80.0, "elevation_m": 3000.0,
         "sea_level_gpe_n_m": -1e12}, model="half-space"))
    b = 2800 * 3000 / 530
    F = (2800 * 9.81 * 3000 * (1500 + 35e3 + b / 2) - 1e12
         + float(Cooling(Physics(model="half-space")).ridge_push_half_space_closed_n_m(80.0)))
    d = 2 * np.sin(np.radians(20.0))
    np.testing.assert_allclose(term.torque()[0, 1], -R**2 * F * d, rtol=1e-8)


def test_body_force_of_a_gradient_equals_the_line_integral_round_the_continent():
    # Stokes on the sphere: the body force -grad U over a continent inside one plate has
    # the torque -R^2 oint U dr, the opposite of a line force U pushing out along its
    # margin. U from a smooth elevation field; the grid sum's error falls with the step
    # (measured: 0.37, 0.26, 0.11 and 0.017 % of the torque at 1, 0.5, 0.25, 0.125 degree)
    from torque.forces import Context, gpe
    w = hemispheres()
    cont = quad([(-20, 10), (20, 10), (20, 50), (-20, 50)])
    elevation = (lambda lon, lat: 1500 + 1200 * np.sin(np.radians(3 * lon))
                 * np.cos(np.radians(2 * lat)))
    spec = hyp({"kind": "gpe", "form": "distributed"})
    errs = []
    for step in (0.5, 0.25):
        data = torque.WorldData(w, continents=cont, topography=topo(step, elevation))
        ctx = Context(data, spec)
        model = gpe.column_model(ctx, spec.forces[0])
        body, _ = gpe.interior_torque(ctx, spec.forces[0], model)
        pcs, plate = ctx.margin_pieces(spacing_km=5.0)
        lon, lat = sphere.xyz_to_lonlat(pcs.mid)
        U = model.continental_gpe(elevation(lon, lat))
        line = ctx.line_force_torque(pcs, U, -1.0, plate)
        assert np.all(plate == 0)
        errs.append(np.linalg.norm(body[0] + line[0]) / np.linalg.norm(line[0]))
    assert errs[0] < 0.004 and errs[1] < 0.6 * errs[0]


def test_distributed_form_and_its_errors():
    w, cont = margin_world()
    # a uniform sea-level continent: no gradient, so the distributed form is the margin
    data = torque.WorldData(w, continents=cont, topography=topo(1.0, lambda x, y: 0 * x))
    margin, dist = torque.compute_torques(data, hyp(
        {"kind": "gpe", "age_myr": 50.0}, {"kind": "gpe", "form": "distributed",
                                           "age_myr": 50.0}))
    assert dist.label == "gpe_distributed"
    np.testing.assert_allclose(dist.driving, margin.driving, rtol=1e-9)
    with pytest.raises(InputError, match="needs a topography grid"):
        torque.compute_torques(torque.WorldData(w, continents=cont),
                               hyp({"kind": "gpe", "form": "distributed"}))
    with pytest.raises(InputError, match="need continent polygons"):
        torque.compute_torques(torque.WorldData(w), hyp({"kind": "gpe"}))
    with pytest.raises(InputError, match="crust_density"):
        torque.compute_torques(torque.WorldData(w, continents=cont),
                               hyp({"kind": "gpe", "crust_density": 3400.0}))


def test_topography_files_are_read_and_bad_ones_refused(tmp_path):
    import xarray as xr
    from torque.io.grids import read_topography
    lon = np.arange(-180, 180, 2.0) + 1
    lat = np.arange(-90, 90, 2.0) + 1
    e = np.full((len(lat), len(lon)), 500.0)
    coords = {"lon": lon, "lat": lat}
    xr.Dataset({"elevation_m": (("lat", "lon"), e), "crust_km": (("lat", "lon"), e * 0 + 40)},
               coords=coords).to_netcdf(tmp_path / "t.nc", engine="h5netcdf")
    g = read_topography(tmp_path / "t.nc")
    assert g.crust_m[0, 0] == 40e3 and g.elevation_m[5, 5] == 500.0
    xr.Dataset({"elevation_m": (("lat", "lon"), e * 100)}, coords=coords).to_netcdf(
        tmp_path / "km.nc", engine="h5netcdf")
    with pytest.raises(InputError, match="within \\+-11 km"):
        read_topography(tmp_path / "km.nc")
    xr.Dataset({"elevation_m": (("lat", "lon"), e), "crust_km": (("lat", "lon"), -e)},
               coords=coords).to_netcdf(tmp_path / "c.nc", engine="h5netcdf")
    with pytest.raises(InputError, match="crust_km must be finite, positive"):
        read_topography(tmp_path / "c.nc")
