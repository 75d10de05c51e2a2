"""The report says what a reader of each fit must know: a circular fit, the mantle frame,
and the resampled intervals (no numbers are computed here: they come from the fit)."""

from torque.diagnostics import Coefficient, FitResult
from torque.report import _fit_note


def test_a_fits_table_carries_its_warnings_frame_and_intervals(tmp_path):
    fit = FitResult(
        "h", {"slab": Coefficient(0.05, 0.001, True, "1", 0.049, 0.002)},
        notes=("circular: sea-floor ages were synthesised from the same motions",),
        uncertainty={"monte_carlo_motions": {"members": 100, "fit": "velocity",
                                             "coefficients": {"slab": {"p2_5": 0.048,
                                                                       "p97_5": 0.052}}}},
        frame={"free": True, "rotation": {"lat": 10.0, "lon": 20.0, "rate": 0.3},
               "net_rotation_observed": {"rate": 0.03}, "net_rotation_predicted": {"rate": 0.02}})
    note = _fit_note(fit)
    assert note.startswith("Warning: sea-floor ages were synthesised")
    assert "Free mantle frame: the mantle turns" in note and "0.3000 deg/Myr" in note
    assert ("Monte carlo motions (100 members, velocity-space refits), 95 % intervals: slab "
            "0.048 to 0.052.") in note
    assert _fit_note(FitResult("plain", {})) is None


def test_a_fits_table_warns_where_the_two_fits_disagree():
    # the same rule as the terminal's (twice the combined standard error; common practice,
    # no source): 0.05 +- 0.001 against 0.045 +- 0.001 differ by 3.5 of it
    fit = FitResult("h", {"slab": Coefficient(0.05, 0.001, True, "1", 0.045, 0.001)})
    assert "Warning: slab: the velocity-space (0.05) and torque-space (0.045) fits differ" \
        in _fit_note(fit)
    agree = FitResult("h", {"slab": Coefficient(0.05, 0.001, True, "1", 0.0499, 0.001)})
    assert _fit_note(agree) is None
