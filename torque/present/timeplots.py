"""Charts against time for a stage series: each term's torque, and predicted against
observed speed, for chosen plates (matplotlib; written atomically)."""

from __future__ import annotations

import numpy as np

from .maps.layers import _save
from .maps.style import DPI, _plt, caption, force_colours

__all__ = ["default_plates", "torque_through_time", "speed_through_time"]


def default_plates(result, n: int = 4) -> list:
    """The series file's ``plates``, else the ``n`` largest plates of the youngest stage.

    Parameters
    ----------
    result : SeriesResult
    n : int

    Returns
    -------
    list of str
    """
    if result.series.plates:
        return list(result.series.plates)
    sy = result.stages[0].system
    return [sy.plates[i] for i in np.argsort(-sy.area)[:n]]


def _panels(plates):
    plt = _plt()
    n = len(plates)
    cols = min(n, 2)
    rows = int(np.ceil(n / cols))
    fig, axes = plt.subplots(rows, cols, figsize=(5.2 * cols, 3.2 * rows), squeeze=False,
                             sharex=True, dpi=DPI)
    for ax in axes.ravel()[n:]:
        ax.set_visible(False)
    return fig, axes.ravel()[:n]


def _time_axis(axes):
    for ax in axes:
        ax.set_xlabel("time, Ma")
    axes[0].invert_xaxis()          # shared by all panels: once, present on the right


def torque_through_time(path, result, tables, plates=None):
    """Each term's torque magnitude (10^25 N m) against time for each chosen plate.

    Parameters
    ----------
    path : str or Path
    result : SeriesResult
    tables : dict
        :func:`torque.io.series.series_tables` of the result.
    plates : sequence of str, optional
        Default :func:`default_plates`.

    Returns
    -------
    path
    """
    plates = plates or default_plates(result)
    tq = tables["torques"]
    labels = list(result.fit.labels)
    colours = force_colours(labels)
    fig, axes = _panels(plates)
    plate = np.array(tq["plate"])
    term = np.array(tq["term"])
    t = np.array(tq["time_ma"], float)
    mag = np.array(tq["magnitude_1e25_nm"], float)
    for ax, name in zip(axes, plates):
        for label in labels + ["total"]:
            sel = (plate == name) & (term == label)
            if not sel.any():
                continue
            ax.plot(t[sel], mag[sel], marker="o", ms=3.5, lw=1.4 if label != "total" else 1.0,
                    color=colours.get(label, "black"), ls="-" if label != "total" else ":",
                    label=label if label != "total" else "total (balance residual)")
        ax.set_title(name, fontsize=10)
        ax.set_ylabel("torque, 10^25 N m")
        ax.grid(alpha=0.3)
    _time_axis(axes)
    handles, names = axes[0].get_legend_handles_labels()
    fig.legend(handles, names, loc="upper center", ncol=min(len(names), 5), fontsize=8,
               frameon=False, bbox_to_anchor=(0.5, 1.02))
    fig.tight_layout(rect=(0, 0, 1, 0.94))
    caption(fig, f"Torque of each term at the jointly fitted coefficients and the observed "
                 f"motions, per stage; present on the right. {result.series.name}.")
    return _save(fig, path)


def speed_through_time(path, result, tables, plates=None):
    """Predicted and observed RMS speed (mm/yr) against time for each chosen plate.

    Parameters
    ----------
    path : str or Path
    result : SeriesResult
    tables : dict
    plates : sequence of str, optional

    Returns
    -------
    path
    """
    plates = plates or default_plates(result)
    pr = tables["predicted"]
    fig, axes = _panels(plates)
    plate = np.array(pr["plate"])
    t = np.array(pr["time_ma"], float)
    for ax, name in zip(axes, plates):
        sel = plate == name
        ax.plot(t[sel], np.array(pr["observed_speed_mm_yr"])[sel], "o", color="#1b4f8a",
                label="observed")
        ax.plot(t[sel], np.array(pr["predicted_speed_mm_yr"])[sel], "-", color="#c4501b",
                label="predicted (joint fit)")
        ax.set_title(name, fontsize=10)
        ax.set_ylabel("RMS speed, mm/yr")
        ax.grid(alpha=0.3)
    _time_axis(axes)
    handles, names = axes[0].get_legend_handles_labels()
    fig.legend(handles, names, loc="upper center", ncol=2, fontsize=8, frameon=False,
               bbox_to_anchor=(0.5, 1.02))
    fig.tight_layout(rect=(0, 0, 1, 0.94))
    caption(fig, "RMS speed over each plate, in the mantle's frame: observed, and predicted by "
                 "the balance at the jointly fitted coefficients; present on the right.")
    return _save(fig, path)
