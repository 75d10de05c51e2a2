"""A fast version of scripts/calibrate.py: the fit's intervals on noisy synthetic data with
known truth (the demo's forward model and stated noise, polygons_demo/truth.json).

Source: for an unbiased estimator with correct standard errors, the 95 % interval covers
the truth in 95 % of realisations and the mean error is zero (any statistics text; the
band here is wide because 60 realisations give a coverage to about +- 3 %).
"""

import sys
from pathlib import Path

SCRIPTS = Path(__file__).resolve().parents[1] / "scripts"


def _calibrate(**kw):
    sys.path.insert(0, str(SCRIPTS))
    try:
        from calibrate import calibrate
    finally:
        sys.path.remove(str(SCRIPTS))
    return calibrate(**kw)


def test_the_preferred_fit_is_unbiased_and_covers_the_truth():
    res = _calibrate(n=60, seed=3)
    for label, c in res["fits"]["velocity"].items():
        assert abs(c["bias_se"]) < 0.3, label
        assert 0.8 <= c["coverage"] <= 1.0, label


def test_a_free_frame_recovers_the_added_rotation():
    res = _calibrate(n=40, seed=4, free_frame=True)
    assert res["frame"]["coverage_per_component"] >= 0.8
    for label, c in res["fits"]["velocity"].items():
        assert abs(c["bias_se"]) < 0.4, label


def test_the_chi_square_fit_covers_the_truth():
    res = _calibrate(n=60, seed=5, gls=True)
    for label, c in res["fits"]["velocity"].items():
        assert abs(c["bias_se"]) < 0.3, label
        assert 0.85 <= c["coverage"] <= 1.0, label


def test_the_profile_intervals_cover_the_truth():
    res = _calibrate(n=30, seed=6, gls=True, profile=True)
    for label, c in res["profile"].items():
        assert 0.8 <= c["coverage"] <= 1.0, label
