"""The whole job on a published global plate model, and on a rotated, jittered twin of it.

The model is ../shared/data/global-plates-2003/ (Bird 2003, G-cubed 4, 1027, with neutral
plate identifiers; see its ATTRIBUTION.md): 52 plates, vertices as digitised, one zero-width
spike, a boundary file with text attributes, and motions relative to plate G01.

Sources: plate areas from GeographicLib through pyproj.Geod on a sphere (Karney 2013,
J. Geodesy 87); the no-net-rotation condition int r x v dA = 0 checked by an independent
quadrature on a lon/lat grid (cell areas R^2 cos(lat) dlat dlon); rotation invariance of
every exact quantity (torques and predictions rotate with the world).
"""

import csv
import json
from pathlib import Path

import numpy as np
import pytest
from pyproj import Geod
from scipy.spatial.transform import Rotation

import torque
from torque import sphere
from torque.inference.analysis import analyse
from torque.euler import RAD_S_PER_DEG_MYR
from torque.hypothesis import hypothesis_from_dict
from torque.io import read_motions

MODEL = Path(__file__).resolve().parents[2] / "shared" / "data" / "global-plates-2003"
pytestmark = pytest.mark.skipif(not (MODEL / "world.toml").is_file(),
                                reason=f"the published model is not at {MODEL}")
HYP = {"force": [{"kind": "ridge", "form": "edge", "coefficient": 1.0},
                 {"kind": "slab"}, {"kind": "drag"}]}


@pytest.fixture(scope="module")
def job(tmp_path_factory):
    """Every command of the job on the model; the folder of outputs."""
    from torque.cli import main
    out = tmp_path_factory.mktemp("published")
    world = MODEL / "world.toml"
    (out / "h.toml").write_text('name = "ridge, slab and drag"\n[[force]]\nkind = "ridge"\n'
                                'coefficient = 1.0\n[[force]]\nkind = "slab"\n'
                                '[[force]]\nkind = "drag"\n')
    (out / "rd.toml").write_text('name = "ridge and drag"\n[[force]]\nkind = "ridge"\n'
                                 'coefficient = 1.0\n[[force]]\nkind = "drag"\n')
    steps = [["frame", world, MODEL / "motions_G01_fixed.csv", "--to", "nnr",
              "-o", out / "nnr.csv"],
             ["field", world, out / "nnr.csv", "--step", "2", "-o", out / "field.csv"],
             ["boundaries", world, out / "nnr.csv", "-o", out / "b.csv"],
             ["torques", world, out / "h.toml", "--motions", out / "nnr.csv",
              "-o", out / "t.csv"],
             ["fit", world, out / "h.toml", out / "nnr.csv", "-o", out / "fit.json"],
             ["predict", world, out / "h.toml", "--coefficients", out / "fit.json",
              "--motions", out / "nnr.csv", "-o", out / "p.csv"],
             ["rank", world, out / "nnr.csv", out / "h.toml", out / "rd.toml",
              "--allow-synthetic-ages", "-o", out / "r.csv"]]
    for argv in steps:
        assert main([str(a) for a in argv]) == 0, argv
    return out


def test_check_repairs_the_spike_and_passes(cli):
    status, out, err = cli("check", MODEL / "world.toml")
    assert status == 0, err
    assert out.count("a zero-width spike was removed") == 1 and "plate 'G31'" in out
    assert "no problems found" not in out and "error:" not in out


def test_plate_areas_agree_with_geographiclib():
    world = torque.load_world(MODEL / "world.toml")
    geod = Geod(a=world.radius_m, b=world.radius_m)
    feats = json.loads((MODEL / "plates.geojson").read_text())["features"]
    for f in feats:
        lon, lat = np.array(f["geometry"]["coordinates"][0]).T
        ref, _ = geod.polygon_area_perimeter(lon, lat)      # the outline as published
        got = world.area_m2[world.plate_index[f["properties"]["plate"]]]
        assert got == pytest.approx(abs(ref), rel=1e-8), f["properties"]["plate"]
    assert world.area_m2.sum() == pytest.approx(4 * np.pi * world.radius_m ** 2, rel=1e-12)


def test_no_net_rotation_by_an_independent_quadrature(job):
    world = torque.load_world(MODEL / "world.toml")
    before = read_motions(MODEL / "motions_G01_fixed.csv").for_world(world)
    after = read_motions(job / "nnr.csv").for_world(world)
    step = 0.25
    lon = np.arange(-180 + step / 2, 180, step)
    lat = np.arange(-90 + step / 2, 90, step)
    LON, LAT = np.meshgrid(lon, lat)
    r = sphere.lonlat_to_xyz(LON.ravel(), LAT.ravel())
    dA = (np.cos(np.radians(LAT)) * np.radians(step) ** 2).ravel()
    plate = world.locate_xyz(r)

    def moment(omega):             # int r x (w x r) dA on the unit sphere
        v = np.cross(omega[plate], r)
        return (np.cross(r, v) * dA[:, None]).sum(axis=0)
    m0, m1 = moment(before), moment(after)
    assert np.linalg.norm(m1) < 3e-3 * np.linalg.norm(m0)


def test_the_whole_job_gives_numbers_in_the_fields_units(job):
    fit = json.loads((job / "fit.json").read_text())
    slab, drag = fit["coefficients"]["slab"], fit["coefficients"]["drag_all"]
    assert 0 <= slab["value"] <= 1 and drag["value"] > 0
    # a basal drag coefficient C = eta / h for an asthenosphere of 1e18-1e21 Pa s and
    # 100-200 km (common practice, no source)
    assert 1e18 / 200e3 / 10 < drag["value"] < 1e21 / 100e3 * 10
    assert len(fit["plates"]) == 52
    rank = list(csv.reader((job / "r.csv").read_text().splitlines()))
    assert len(rank) == 3 and rank[1][1] == "ridge, slab and drag"
    field = np.genfromtxt(job / "field.csv", delimiter=",", names=True, dtype=None,
                          encoding="utf-8")
    assert 0 < np.median(np.hypot(field["ve_mm_yr"], field["vn_mm_yr"])) < 200


@pytest.fixture(scope="module")
def twin(tmp_path_factory):
    """The model rotated by a random rotation, every vertex jittered by up to 1e-7 degrees
    (so neighbours no longer share vertices exactly); the world file and the rotation."""
    rng = np.random.default_rng(12)
    Q = Rotation.random(random_state=7).as_matrix()
    out = tmp_path_factory.mktemp("twin")

    def move(coords):
        ll = np.asarray(coords, float)
        xyz = sphere.lonlat_to_xyz(*ll.T) @ Q.T
        lon, lat = sphere.xyz_to_lonlat(xyz)
        lon = lon + rng.uniform(-1e-7, 1e-7, len(lon))
        lat = np.clip(lat + rng.uniform(-1e-7, 1e-7, len(lat)), -90, 90)
        return np.c_[lon, lat].tolist()
    for name in ("plates", "boundaries"):
        doc = json.loads((MODEL / f"{name}.geojson").read_text())
        for f in doc["features"]:
            g = f["geometry"]
            g["coordinates"] = ([move(r) for r in g["coordinates"]] if g["type"] == "Polygon"
                                else move(g["coordinates"]))
        (out / f"{name}.geojson").write_text(json.dumps(doc))
    (out / "world.toml").write_text((MODEL / "world.toml").read_text())
    return out / "world.toml", Q


def test_the_twin_checks_and_its_results_rotate_with_it(twin, cli):
    path, Q = twin
    status, out, err = cli("check", path)
    assert status == 0, err
    hyp = hypothesis_from_dict(HYP)
    world0 = torque.load_world(MODEL / "world.toml")
    nnr = torque.to_no_net_rotation(world0, read_motions(MODEL / "motions_G01_fixed.csv"))[0]
    results = []
    for world_path, Qw in ((MODEL / "world.toml", np.eye(3)), (path, Q)):
        inputs = torque.Inputs.load(world_path)
        terms = torque.compute_torques(inputs, hyp)    # no motions: exact line integrals
        system = torque.assemble(inputs.world, hyp, terms)
        omega = nnr.for_world(inputs.world) @ Qw.T     # the same motions, turned with it
        results.append((system, analyse(system, omega)))
    (s0, r0), (s1, r1) = results
    # the torques rotate with the world: T' = Q T (vertices jittered by 1e-7 degrees)
    for k in range(len(s0.labels)):
        b0 = s0.b[k].reshape(-1, 3) @ Q.T
        np.testing.assert_allclose(s1.b[k].reshape(-1, 3), b0, atol=1e-6 * np.abs(b0).max())
    np.testing.assert_allclose(r1.preferred.values, r0.preferred.values, rtol=1e-5)
    np.testing.assert_allclose(r1.omega_pred, r0.omega_pred @ Q.T,
                               atol=1e-5 * np.abs(r0.omega_pred).max())
    assert np.abs(r0.omega_pred).max() > 0.1 * RAD_S_PER_DEG_MYR


def test_the_whole_job_runs_on_the_twin(twin, tmp_path, cli):
    # no manual repair: every command of the job on the rotated, jittered model
    path, Q = twin
    world0 = torque.load_world(MODEL / "world.toml")
    nnr = torque.to_no_net_rotation(world0, read_motions(MODEL / "motions_G01_fixed.csv"))[0]
    torque.write_motions(tmp_path / "nnr.csv", nnr.with_omega(nnr.omega @ Q.T))
    hyp = tmp_path / "h.toml"
    hyp.write_text('[[force]]\nkind = "ridge"\ncoefficient = 1.0\n[[force]]\nkind = "slab"\n'
                   '[[force]]\nkind = "drag"\n')
    m = tmp_path / "nnr.csv"
    for argv in (["frame", path, m, "--to", "nnr", "-o", tmp_path / "n2.csv"],
                 ["field", path, m, "--step", "3", "-o", tmp_path / "f.csv"],
                 ["boundaries", path, m, "-o", tmp_path / "b.csv"],
                 ["torques", path, hyp, "--motions", m, "-o", tmp_path / "t.csv"],
                 ["fit", path, hyp, m, "-o", tmp_path / "fit.json"],
                 ["predict", path, hyp, "--coefficients", tmp_path / "fit.json",
                  "--motions", m, "-o", tmp_path / "p.csv"],
                 ["rank", path, m, hyp, "--allow-synthetic-ages", "-o", tmp_path / "r.csv"]):
        status, out, err = cli(*argv)
        assert status == 0, (argv[0], err)


def test_classification_agrees_with_the_published_classes_better_piece_by_piece(tmp_path):
    # The plates alone, classified from the no-net-rotation motions, against the class of
    # the nearest published line (within 50 km): piece by piece beats each whole shared
    # edge's mean motion (README: 77.7 % against 60.0 % of the length).
    from scipy.spatial import cKDTree

    from torque.margins import boundary_motion, classify, classify_pieces, sample_boundaries
    (tmp_path / "world.toml").write_text(f'plates = "{(MODEL / "plates.geojson").as_posix()}"'
                                         '\nwinding = "strict"\n')
    pub = torque.load_world(MODEL / "world.toml")
    world = torque.load_world(tmp_path / "world.toml")
    nnr = torque.to_no_net_rotation(pub, read_motions(MODEL / "motions_G01_fixed.csv"))[0]
    s = sample_boundaries(world.boundaries, 50e3 / world.radius_m)
    motion = boundary_motion(world, nnr.for_world(world), s)
    ps = sample_boundaries(pub.boundaries, 10e3 / pub.radius_m)
    d, i = cKDTree(ps.xyz).query(s.xyz)
    published = np.array([pub.boundaries[k].kind for k in ps.line[i]])
    near = d * world.radius_m < 50e3
    whole = np.array(classify(world, motion)[0])[s.line]
    lines, line = classify_pieces(world, motion)
    piece = np.array([b.kind for b in lines])[line]
    share = [s.length[near & (k == published)].sum() / s.length[near].sum()
             for k in (whole, piece)]
    assert share[0] == pytest.approx(0.600, abs=0.005)
    assert share[1] == pytest.approx(0.777, abs=0.005)


def test_ages_synthesised_from_the_fitted_motions_are_flagged(job, cli):
    # no age grid: the ages come from the motions being fitted (issue 13, item 6)
    world = MODEL / "world.toml"
    status, out, err = cli("fit", world, job / "h.toml", job / "nnr.csv",
                           "-o", job / "fit2.json")
    assert status == 0 and "partly circular" in err
    assert any(n.startswith("circular:") for n in json.loads(
        (job / "fit2.json").read_text())["notes"])
    status, out, err = cli("rank", world, job / "nnr.csv", job / "h.toml", job / "rd.toml")
    assert status == 2 and "partly circular" in err and "--allow-synthetic-ages" in err


def test_the_researchers_outputs_on_the_published_model(job, tmp_path, cli):
    # issue 14 on real data: torques at the fitted values with their totals, the maps that
    # explain, and a manifest that names every input with its SHA-256 (hashlib)
    import hashlib
    world = MODEL / "world.toml"
    status, out, _ = cli("fit", world, job / "h.toml", MODEL / "motions_G01_fixed.csv",
                         "--free-frame", "--no-profile", "-o", tmp_path / "f.json")
    assert status == 0 and "free mantle frame" in out
    status, out, _ = cli("torques", world, job / "h.toml", "--motions", job / "nnr.csv",
                         "--coefficients", tmp_path / "f.json", "-o", tmp_path / "t.csv")
    assert status == 0 and "at the fitted coefficients" in out
    rows = list(csv.DictReader(open(tmp_path / "t.csv")))
    assert sum(r["term"] == "total" for r in rows) == 52
    assert {r["coefficient_source"] for r in rows if r["term"] == "slab"} == {"fitted"}
    for kind, extra in (("misfit", ["--fit", tmp_path / "f.json"]),
                        ("torque-globe", ["--hypothesis", job / "h.toml", "--motions",
                                          job / "nnr.csv", "--fit", tmp_path / "f.json"])):
        status, _, err = cli("map", world, "--kind", kind, *extra, "-o",
                             tmp_path / f"{kind}.png")
        assert status == 0, err
        assert (tmp_path / f"{kind}.png").stat().st_size > 20_000
    run = json.loads((tmp_path / "f.json").read_text())["run"]
    by_name = {Path(i["path"]).name: i["sha256"] for i in run["inputs"]}
    for name in ("plates.geojson", "boundaries.geojson", "motions_G01_fixed.csv"):
        assert by_name[name] == hashlib.sha256((MODEL / name).read_bytes()).hexdigest()
