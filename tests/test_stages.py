"""Plate configurations through time: stage motions, the joint fit, executors.

Sources beside each check: scipy's Rotation (composition and rotation vectors) for the
stage Euler vectors; the demo series' truth (synthetic: tests/ do not invent data, the
generator states how it was made) for the recovery within 3 standard errors.
"""

import json

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from torque.errors import InputError
from torque.euler import MYR_S, RAD_S_PER_DEG_MYR
from torque.io.series import load_stage, read_rotations, read_series
from torque.workflows import run_series
from torque.parallel import Executor, spawn_seeds
from torque.inference.stages import fit_joint, stage_euler_vector

from .conftest import assert_refused, here

DEMO = here().parent / "polygons_demo"
SERIES = DEMO / "stages" / "series.toml"


def test_stage_euler_vector_is_the_composed_rotation():
    # R(t) present -> past; S = R(t) R(t+dt)^-1 maps the plate at t+dt onto it at t
    # (scipy's Rotation composes and inverts); a steady rotation gives its Euler vector back
    w = np.array([0.3, -0.2, 0.5]) * RAD_S_PER_DEG_MYR
    times = np.array([5.0, 10.0, 20.0])
    R = Rotation.from_rotvec(-w[None] * times[:, None] * MYR_S)
    np.testing.assert_allclose(stage_euler_vector(times, R, 7.0, 2.0), w, rtol=1e-12)
    # two steady motions, one after the other (w1 until 10 Ma, w2 before): at the joint the
    # stage from 12 to 10 Ma is w2 carried by R1(10) (the frame of the younger stage)
    w1, w2 = w, np.array([-0.4, 0.1, 0.2]) * RAD_S_PER_DEG_MYR
    R10 = Rotation.from_rotvec(-w1 * 10 * MYR_S)
    R12 = Rotation.from_rotvec(-w2 * 2 * MYR_S) * R10
    S = R10 * R12.inv()
    omega = stage_euler_vector([10.0, 12.0], Rotation.concatenate([R10, R12]), 10.0, 2.0)
    np.testing.assert_allclose(omega, S.as_rotvec() / (2 * MYR_S), rtol=1e-12)
    np.testing.assert_allclose(omega, w2, rtol=1e-12)      # S = exp(2 w2): w2 itself


def test_rotations_file_gives_the_stage_motions(tmp_path):
    # finite rotations written from the demo's true Euler vectors (steady over 0-3 Ma):
    # the stage of the present world from rotations equals those vectors
    from torque.euler import vector_to_pole
    from torque.io import read_motions, write_csv
    world = torque_world()
    w = read_motions(DEMO / "true_motions.csv").for_world(world)
    rows = {"plate": [], "time_ma": [], "lat": [], "lon": [], "angle_deg": []}
    for t in (1.0, 3.0):
        for name, wi in zip(world.plate_names, w):
            lat, lon, _ = vector_to_pole(-wi[None])
            rows["plate"].append(name)
            rows["time_ma"].append(t)
            rows["lat"].append(float(lat[0]))
            rows["lon"].append(float(lon[0]))
            rows["angle_deg"].append(float(np.degrees(np.linalg.norm(wi) * t * MYR_S)))
    write_csv(tmp_path / "rot.csv", rows)
    rot = read_rotations(tmp_path / "rot.csv")
    assert set(rot) == set(world.plate_names)
    s = read_series(write_series(tmp_path, [(0.0, DEMO / "world.toml", None,
                                             tmp_path / "rot.csv")]))
    stage = load_stage((s.stages[0], s.hypothesis))
    # the CSV holds 10 significant digits
    np.testing.assert_allclose(stage.omega_obs, w, rtol=0, atol=1e-8 * np.abs(w).max())


def torque_world():
    from torque.io import load_world
    return load_world(DEMO / "world.toml")


def write_series(folder, stages, **keys):
    """A series file in ``folder``: stages (time, world, motions or None, rotations)."""
    lines = [f'hypothesis = "{DEMO / "hypotheses" / "continental_drag.toml"}"']
    for k, v in keys.items():
        lines.append(f"{k} = {json.dumps(v)}")
    for t, world, motions, rotations in stages:
        lines += ["[[stage]]", f"time_ma = {t}", f'world = "{world}"']
        lines += [f'motions = "{motions}"'] if motions else [f'rotations = "{rotations}"',
                                                             "interval_myr = 1.0"]
    path = folder / "series.toml"
    path.write_text("\n".join(lines) + "\n")
    return path


def test_joint_fit_of_the_demo_series_recovers_its_truth():
    # the demo series was made by the forward model of one hypothesis with one set of
    # coefficients at every stage (truth.json): the joint fit recovers each within 3
    # standard errors, and fits every stage to about the noise
    truth = json.loads((DEMO / "stages" / "truth.json").read_text())["true_coefficients"]
    series = read_series(SERIES)
    stages = [load_stage((st, series.hypothesis)) for st in series.stages]
    fit = fit_joint(stages)
    se = np.sqrt(np.diag(fit.cov))
    assert fit.params == ("slab", "drag_ocean", "drag_continent")
    for j, name in enumerate(fit.params):
        assert abs(fit.parameters[j] - truth[name]) < 3 * se[j], name
    assert np.all(fit.stage_rms_mm_yr < 3.0) and np.all(fit.stage_variance_reduction > 0.99)
    # one slab coefficient per stage: each stage recovers the same truth within 3 se
    per = fit_joint(stages, per_stage=["slab"])
    assert len(per.params) == 2 + len(stages)
    for s in range(len(stages)):
        assert abs(per.values[s, 1] - truth["slab"]) < 3 * per.stderr[s, 1]
    assert per.rss <= fit.rss * (1 + 1e-9)        # more parameters fit at least as well


def small_series(tmp_path):
    """Two stages of the demo series, one other hypothesis ranked against the true one."""
    lines = [f'hypothesis = "{DEMO / "hypotheses" / "continental_drag.toml"}"',
             f'compare = ["{DEMO / "hypotheses" / "ridge_slab_drag.toml"}"]']
    for t, d in ((0.0, DEMO), (10.0, DEMO / "stages" / "t10")):
        lines += ["[[stage]]", f"time_ma = {t}", f'world = "{d / "world.toml"}"',
                  f'motions = "{d / "motions.csv"}"']
    path = tmp_path / "small.toml"
    path.write_text("\n".join(lines) + "\n")
    return path


def summary(result):
    return np.concatenate([result.fit.parameters, result.monte_carlo["draws"].ravel(),
                           [r["cv_rms_mm_yr"] for r in result.ranking]])


def test_same_numbers_on_every_executor(tmp_path):
    # the series' tasks (stage balances, joint fits, cross-validation, seeded Monte Carlo
    # draws) give identical numbers in this process, on a pool of two processes and on a
    # local Dask cluster of two workers, and whatever the chunking of the draws
    pytest.importorskip("dask.distributed")
    path = small_series(tmp_path)
    with Executor(1) as ex:
        one = run_series(path, ex, monte_carlo=6, seed=3, chunk=6)
    with Executor(2) as ex:
        two = run_series(path, ex, monte_carlo=6, seed=3, chunk=2)
    with Executor(scheduler="local:2") as ex:
        dask = run_series(path, ex, monte_carlo=6, seed=3, chunk=3)
    a = summary(one)
    np.testing.assert_allclose(summary(two), a, rtol=1e-12, atol=0)
    np.testing.assert_allclose(summary(dask), a, rtol=1e-12, atol=0)
    assert np.all(np.isfinite(a)) and one.monte_carlo["failed"] == 0
    assert "Dask" in dask.executor and "2 processes" in two.executor


def test_seeds_are_spawned_per_draw():
    a = spawn_seeds(11, 4)
    b = spawn_seeds(11, 8)[:4]
    assert [s.generate_state(2).tolist() for s in a] == [s.generate_state(2).tolist()
                                                          for s in b]


@pytest.mark.parametrize("text, words", [
    ("", ["'hypothesis' is required"]),
    ('hypothesis = "{h}"\n', ["no [[stage]] tables"]),
    ('hypothesis = "{h}"\n[[stage]]\ntime_ma = 5\nworld = "{w}"\n', ["either 'motions' or "
                                                                     "'rotations'"]),
    ('hypothesis = "{h}"\n[[stage]]\ntime_ma = 5\nworld = "{w}"\nmotions = "{m}"\n'
     '[[stage]]\ntime_ma = 5\nworld = "{w}"\nmotions = "{m}"\n', ["same time"]),
    ('hypothesis = "{h}"\n[[stage]]\ntime_ma = 5\nworld = "nowhere.toml"\nmotions = "{m}"\n',
     ["[[stage]] 1 (5 Ma)", "does not exist"]),
    ('hypothesis = "{h}"\nstages = 3\n', ["unknown key", "'stages'"]),
])
def test_bad_series_files_are_refused(tmp_path, text, words):
    path = tmp_path / "s.toml"
    path.write_text(text.format(h=DEMO / "hypotheses" / "continental_drag.toml",
                                w=DEMO / "world.toml", m=DEMO / "motions.csv"))
    with pytest.raises(InputError) as err:
        read_series(path)
    for w in words:
        assert w in str(err.value)


def test_a_problem_in_a_stage_names_the_stage(tmp_path, cli):
    # a stage whose motions lack a plate: exit 2, the stage and the file named
    bad = tmp_path / "m.csv"
    lines = (DEMO / "motions.csv").read_text().splitlines()
    bad.write_text("\n".join(lines[:-1]) + "\n")
    path = write_series(tmp_path, [(0.0, DEMO / "world.toml", DEMO / "motions.csv", None),
                                   (7.0, DEMO / "world.toml", bad, None)])
    assert_refused(cli("stages", path, "-o", tmp_path / "out"), None, "stage 2 (7 Ma)")


def test_stages_command_writes_its_outputs(tmp_path, cli):
    status, out, err = cli("stages", small_series(tmp_path), "-o", tmp_path / "out",
                           "--plates", "Vessane,Orlum", "-q")
    assert status == 0, err
    names = {p.name for p in (tmp_path / "out").iterdir()}
    assert {"series_fit.json", "torques.csv", "predicted.csv", "misfit.csv", "rank.csv",
            "torque_through_time.png", "speed_through_time.png", "report.html",
            "report.md"} <= names
    record = json.loads((tmp_path / "out" / "series_fit.json").read_text())
    assert set(record["parameters"]) == {"slab", "drag_ocean", "drag_continent"}
    assert [s["time_ma"] for s in record["stages"]] == [0.0, 10.0]
    assert record["ranking"][0]["name"] == "ridge, slab, oceanic and continental drag"
    report = (tmp_path / "out" / "report.md").read_text()
    assert "stage 2 (10 Ma)" in report and "Through time" in report
    assert "caution" in out.lower()


def test_a_folder_holding_other_files_is_refused_unless_forced(cli, tmp_path):
    # as torque demo: nothing of a researcher's is overwritten by surprise (common
    # practice, no source)
    out = tmp_path / "out"
    out.mkdir()
    (out / "notes.txt").write_text("mine")
    code, _, err = cli("stages", small_series(tmp_path), "-o", out, "-q")
    assert code == 2 and "holds other files" in err and "--force" in err
    assert sorted(p.name for p in out.iterdir()) == ["notes.txt"]
    assert cli("stages", small_series(tmp_path), "-o", out, "-q", "--force")[0] == 0
    assert (out / "notes.txt").read_text() == "mine" and (out / "series_fit.json").is_file()
