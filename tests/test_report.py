"""The report says what a reader of each fit must know: a circular fit, disagreeing fits,
the mantle frame and net rotation, every interval, and how the run was made (no numbers
are computed here: they come from the fit)."""

from torque.results import Coefficient, FitResult
from torque.present.report import _fit_note, _frame_table, _uncertainty_tables, _warnings


def _fit():
    return FitResult(
        "h", {"slab": Coefficient(0.05, 0.001, True, "dimensionless", 0.0499, 0.002,
                                  0.0481, 0.0521)},
        notes=("circular: sea-floor ages were synthesised from the same motions",),
        uncertainty={"monte_carlo_motions": {"members": 100, "fit": "velocity",
                                             "coefficients": {"slab": {"p2_5": 0.048,
                                                                       "p97_5": 0.052}}}},
        frame={"free": True, "rotation": {"lat": 10.0, "lon": 20.0, "rate": 0.3},
               "stderr_deg_myr": [0.01, 0.02, 0.01],
               "net_rotation_observed": {"rate": 0.03}, "net_rotation_predicted": {"rate": 0.02}})


def test_a_fits_table_carries_its_warnings():
    note = _fit_note(_fit())
    assert note.startswith("Warning: sea-floor ages were synthesised")
    assert _fit_note(FitResult("plain", {})) is None


def test_every_interval_has_its_column():
    (title, header, rows, _), = _uncertainty_tables([("h", _fit())])
    # a fit written before the quantile was recorded spans 1.96 standard errors
    assert header[2:] == ["standard error interval", "profile likelihood",
                          "monte carlo motions (100)"]
    assert rows == [["slab", "0.05", "0.04804 to 0.05196", "0.0481 to 0.0521", "0.048 to 0.052"]]


def test_the_interval_spans_the_fits_own_quantile_and_marks_a_bound():
    import dataclasses
    fit = _fit()
    c = dataclasses.replace(fit.coefficients["slab"], quantile=2.5, profile_low=0.0,
                            profile_low_at_bound=True)
    fit = dataclasses.replace(fit, coefficients={"slab": c})
    (_, _, rows, _), = _uncertainty_tables([("h", fit)])
    assert rows[0][2] == "0.0475 to 0.0525"
    assert rows[0][3] == "0 to 0.0521 (on its bound)"


def test_the_frame_and_net_rotations_of_every_fit():
    _, header, rows, _ = _frame_table([("h", _fit()), ("plain", FitResult("plain", {}))])
    assert rows[0] == ["h", "fitted", "10.00, 20.00", "0.3", "0.02", "0.03", "0.02"]
    assert rows[1][:2] == ["plain", "assumed"]


def test_warnings_gather_circular_fits_bounds_and_the_world_check():
    rows = _warnings({"check_problems": ["warning: a spike was removed"]}, [("h", _fit())])
    assert ["world check", "warning: a spike was removed"] in rows
    assert rows[0][0] == "h" and "synthesised" in rows[0][1]


def test_a_fits_table_warns_where_the_two_fits_disagree():
    # the same rule as the terminal's (twice the combined standard error; common practice,
    # no source): 0.05 +- 0.001 against 0.045 +- 0.001 differ by 3.5 of it
    fit = FitResult("h", {"slab": Coefficient(0.05, 0.001, True, "1", 0.045, 0.001)})
    assert "Warning: slab: the velocity-space (0.05) and torque-space (0.045) fits differ" \
        in _fit_note(fit)
    agree = FitResult("h", {"slab": Coefficient(0.05, 0.001, True, "1", 0.0499, 0.001)})
    assert _fit_note(agree) is None
