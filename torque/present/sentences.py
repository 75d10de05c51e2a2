"""The sentences that say what a fit means, for the terminal, the report and the demo.
"""

from __future__ import annotations

__all__ = ["fits_disagree", "frame_summary", "chi_square_summary"]


def fits_disagree(d: dict) -> list:
    """Free coefficients whose velocity-space and torque-space values differ by more than
    twice their combined standard error.

    Parameters
    ----------
    d : dict
        :meth:`torque.results.FitResult.as_dict`.

    Returns
    -------
    list of str
    """
    out = []
    for label, c in d["coefficients"].items():
        if not c["free"]:
            continue
        se = (c["stderr"] ** 2 + (c.get("torque_space_stderr") or 0.0) ** 2) ** 0.5
        gap = abs(c["value"] - c["torque_space_value"])
        if se > 0 and gap > 2 * se:
            out.append(f"{label}: the velocity-space ({c['value']:.4g}) and torque-space "
                       f"({c['torque_space_value']:.4g}) fits differ by {gap / se:.1f} times "
                       "their combined standard error; the velocity-space value is preferred")
    return out


def frame_summary(frame: dict) -> str:
    """One line on a fit's mantle frame and net rotations, for the terminal and the report.

    Parameters
    ----------
    frame : dict
        :attr:`FitResult.frame`.

    Returns
    -------
    str
        Lower case, no final stop.
    """
    o, p = frame["net_rotation_observed"], frame["net_rotation_predicted"]
    nets = (f"net rotation of the lithosphere relative to the mantle: observed "
            f"{o['rate']:.4f}, predicted {p['rate']:.4f} deg/Myr")
    r = frame.get("rotation")
    if not r:
        return f"motions taken to be in the mantle's frame (no rotation fitted or given); {nets}"
    se = frame.get("stderr_deg_myr")
    se = f" (standard error up to {max(se):.2g} per component)" if se else ""
    return (f"{'free' if frame['free'] else 'given'} mantle frame: the mantle turns about "
            f"{r['lat']:.2f} N, {r['lon']:.2f} E at {r['rate']:.4f} deg/Myr{se} in the frame "
            f"of the motions; {nets}")


def chi_square_summary(misfit: dict) -> str | None:
    """One line on a chi-square fit's chi-square and degrees of freedom (None otherwise).

    Parameters
    ----------
    misfit : dict
        :attr:`FitResult.misfit`.

    Returns
    -------
    str or None
        Lower case, no final stop.
    """
    if "chi_square" not in misfit:
        return None
    return (f"chi-square {misfit['chi_square']:.1f} on {misfit['dof']} degrees of freedom "
            f"({misfit['effective_observations']} effective observations, "
            f"{misfit['effective_parameters']} parameters; reduced chi-square "
            f"{misfit['reduced_chi_square']:.2f})")
