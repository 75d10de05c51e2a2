"""The run manifest (issue 14, item 4): every JSON output says what made it.

Sources: SHA-256 of "abc" is the test vector of FIPS 180-2, appendix B.1; file hashes are
checked against Python's hashlib.
"""

import hashlib
import json

from torque.io.manifest import KEY, sha256

from .conftest import here

DEMO = here().parent / "polygons_demo"


def test_sha256_is_the_standard_one(tmp_path):
    (tmp_path / "abc").write_bytes(b"abc")
    assert sha256(tmp_path / "abc") == \
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"


def _check(run, argv_words, files):
    assert run["tool"] == "torque" and run["python"] and run["packages"]["numpy"]
    assert all(w in run["commands"][0] for w in argv_words)
    paths = {i["path"]: i for i in run["inputs"]}
    for f in files:
        entry = next(v for p, v in paths.items() if p.endswith(f))
        assert entry["sha256"] == hashlib.sha256(open(entry["path"], "rb").read()).hexdigest()
    assert run["wall_time_s"] >= 0 and run["started_utc"].endswith("+00:00")


def test_every_json_output_carries_its_manifest(cli, tmp_path):
    world, motions = DEMO / "world.toml", DEMO / "motions.csv"
    hyp = DEMO / "hypotheses" / "ridge_drag.toml"
    status, out, _ = cli("check", world, "--json")
    _check(json.loads(out)[KEY], ["check", "--json"], ["world.toml", "plates.geojson",
                                                       "boundaries.geojson", "ages.nc"])
    status, out, _ = cli("cooling", "--ages", "10", "--json")
    assert json.loads(out)[KEY]["inputs"] == []
    assert cli("fit", world, hyp, motions, "-o", tmp_path / "f.json", "--bootstrap", "3",
               "--seed", "7", "--no-profile")[0] == 0
    run = json.loads((tmp_path / "f.json").read_text())[KEY]
    _check(run, ["fit", "--seed 7"], ["world.toml", "ridge_drag.toml", "motions.csv"])
    assert run["seeds"] == {"resampling": 7}
    assert cli("rank", world, motions, hyp, DEMO / "hypotheses" / "slab_drag.toml",
               "--json", tmp_path / "r.json")[0] == 0
    _check(json.loads((tmp_path / "r.json").read_text())[KEY], ["rank"],
           ["ridge_drag.toml", "slab_drag.toml"])


def test_the_distribution_has_a_name_of_its_own_and_the_manifest_its_version():
    # "torque" on the package index is an unrelated project: ours installs as
    # plate-torque-balance, and the manifest records this package's own version
    # (common practice, no source)
    import tomllib
    from pathlib import Path

    from torque._version import __version__
    from torque.io.manifest import run_manifest
    meta = tomllib.loads((Path(__file__).resolve().parents[1] / "pyproject.toml").read_text())
    assert meta["project"]["name"] == "plate-torque-balance"
    assert run_manifest([], [])["version"] == __version__
